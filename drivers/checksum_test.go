package drivers_test

import (
	"context"
	"strings"
	"testing"

	"holdfast/drivers"
	"holdfast/drivers/driverstest"
)

func TestCRC16ModbusPublishedChecks(t *testing.T) {
	for _, c := range []struct {
		in   []byte
		want uint16
		src  string
	}{
		// Check value of the CRC catalogue entry CRC-16/MODBUS (docs.rs crc-catalog
		// "CRC_16_MODBUS": check 0x4b37); the same value is the worked example of
		// the CODESYS CAA Memory library's CRC16_Modbus page.
		{[]byte("123456789"), 0x4B37, "crc catalogue"},
		// Worked examples in the test suite of the crcmodbus package on PyPI,
		// which returns the two bytes in wire order (low byte first), so
		// 0x0EB2 there is 0xB20E here.
		{[]byte{1, 2, 3, 4, 5, 6, 7, 8, 9}, 0xB20E, "crcmodbus 0x0eb2"},
		{[]byte{3, 1, 4}, 0x9381, "crcmodbus 0x8193"},
		{[]byte{0x19, 0x89, 0x56}, 0xA947, "crcmodbus 0x47a9"},
	} {
		if got := drivers.CRC16Modbus(c.in); got != c.want {
			t.Errorf("CRC16Modbus(% X) = %04X, want %04X (%s)", c.in, got, c.want, c.src)
		}
	}
}

func TestSumAndXOR(t *testing.T) {
	// By arithmetic on the ASCII codes 0x31..0x39 of "123456789": sum 477 =
	// 0x1DD, so 0xDD mod 256; exclusive-or 0x31 (common practice: the
	// catalogue check string).
	if got := drivers.Sum8([]byte("123456789")); got != 0xDD {
		t.Errorf("Sum8 = %02X, want DD", got)
	}
	if got := drivers.XOR8([]byte("123456789")); got != 0x31 {
		t.Errorf("XOR8 = %02X, want 31", got)
	}
	// Invented frames, by hand from the ASCII codes of RFC 20. Sum:
	// "01/PEEK/" = 30+31+2F+50+45+45+4B+2F = 0x1E4, so E4. Exclusive-or of
	// "READ 1 ~", running: R 52, E 45 → 17, A 41 → 56, D 44 → 12, ' ' 20 → 32,
	// '1' 31 → 03, ' ' 20 → 23, '~' 7E → 5D.
	if got := drivers.Sum8([]byte("01/PEEK/")); got != 0xE4 {
		t.Errorf("Sum8(01/PEEK/) = %02X, want E4", got)
	}
	if got := drivers.XOR8([]byte("READ 1 ~")); got != 0x5D {
		t.Errorf("XOR8(READ 1 ~) = %02X, want 5D", got)
	}
}

// An invented addressed instrument with a start character that is not
// summed: "!<addr>/PEEK/<cs>" gets "!<addr>/<value>/<cs>". By hand, with the
// ASCII codes of RFC 20, "!01/PEEK/" sums (without '!') to
// 30+31+2F+50+45+45+4B+2F = 0x1E4, so E4.
var summed = drivers.ASCIIOptions{
	Steps:    []drivers.Step{{Send: `!{addr}/PEEK/{cs}\r`, Expect: `^!{addr}/(?P<value>[^/]+)/(?P<cs>[0-9A-Fa-f]{2})$`}},
	Address:  "01",
	Checksum: &drivers.Checksum{Kind: "sum8", Skip: 1},
}

func TestASCIIChecksumSentAndVerified(t *testing.T) {
	// The reply's sum covers byte 1 up to the cs group, "01/+1.5E-3/":
	// 30+31+2F+2B+31+2E+35+45+2D+33+2F = 0x223, so 23.
	reply := "!01/+1.5E-3/23\r\n"
	link := driverstest.Lines(reply)
	r, err := newASCII(t, link, summed).Read(context.Background())
	if err != nil || r.Raw != 1.5e-3 {
		t.Fatalf("Read = %+v, %v; want 1.5E-3", r, err)
	}
	if got := string(link.Sent()[0]); got != "!01/PEEK/E4\r" {
		t.Errorf("sent %q, want %q", got, "!01/PEEK/E4\r")
	}
}

func TestASCIIChecksumMismatch(t *testing.T) {
	_, err := newASCII(t, driverstest.Lines("!01/+1.5E-3/00\r\n"), summed).Read(context.Background())
	if err == nil || !strings.Contains(err.Error(), "checksum mismatch") {
		t.Fatalf("err = %v, want a checksum mismatch", err)
	}
}

func TestASCIICRCRaw(t *testing.T) {
	o := drivers.ASCIIOptions{
		Steps:    []drivers.Step{{Send: "123456789{cs}", Expect: `^(?P<value>\S+)$`}},
		Checksum: &drivers.Checksum{Kind: "crc16-modbus", Form: "raw"},
	}
	link := driverstest.Lines("1\r\n")
	if _, err := newASCII(t, link, o).Read(context.Background()); err != nil {
		t.Fatal(err)
	}
	// 0x4B37 low byte first, as Modbus RTU sends it.
	if got := string(link.Sent()[0]); got != "123456789\x37\x4B" {
		t.Errorf("sent %q, want the CRC low byte first", got)
	}
}
