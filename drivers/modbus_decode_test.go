package drivers_test

import (
	"strconv"
	"testing"

	"holdfast/drivers"
)

// A float32 register pair decodes to the decimal the instrument meant, not
// the binary32's exact expansion. Encodings are IEEE 754 binary32, high word
// first, produced outside this code with Python's struct.pack('>f', v):
// 21.1 -> 41 A8 CC CD (exactly 21.100000381469727),
// 0.001234 -> 3A A1 BE 2B (exactly 0.0012339999666437507).
func TestDecodeFloat32Shortest(t *testing.T) {
	for _, c := range []struct {
		regs []uint16
		want string
	}{
		{[]uint16{0x41A8, 0xCCCD}, "21.1"},
		{[]uint16{0x3AA1, 0xBE2B}, "0.001234"},
	} {
		v, err := drivers.DecodeRegisters(c.regs, "float32", false)
		if err != nil {
			t.Fatalf("% X: %v", c.regs, err)
		}
		// How metrics and probe print a float64 (the shortest form).
		if got := strconv.FormatFloat(v, 'g', -1, 64); got != c.want {
			t.Errorf("% X decodes to %s, want %s", c.regs, got, c.want)
		}
		// Low word first: the same value from swapped registers.
		v, err = drivers.DecodeRegisters([]uint16{c.regs[1], c.regs[0]}, "float32", true)
		if err != nil || strconv.FormatFloat(v, 'g', -1, 64) != c.want {
			t.Errorf("low word first % X: %v, %v; want %s", c.regs, v, err, c.want)
		}
	}
}
