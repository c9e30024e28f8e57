package drivers_test

import (
	"context"
	"encoding/binary"
	"errors"
	"math"
	"testing"

	"holdfast/drivers"
	"holdfast/drivers/driverstest"
)

func FuzzDecodeRegisters(f *testing.F) {
	f.Add(uint16(0x3F80), uint16(0x0000), uint8(4), false) // 1.0 as float32
	f.Add(uint16(0xFFFF), uint16(0xFFFE), uint8(2), true)
	f.Add(uint16(0x7FC0), uint16(0), uint8(4), false) // a float32 NaN
	f.Fuzz(func(t *testing.T, a, b uint16, kind uint8, low bool) {
		typ := drivers.RegisterTypes[int(kind)%len(drivers.RegisterTypes)]
		regs := []uint16{a, b}
		if typ == "int16" || typ == "uint16" {
			regs = regs[:1]
		}
		v, err := drivers.DecodeRegisters(regs, typ, low)
		if err != nil {
			if typ != "float32" {
				t.Fatalf("%s % X: %v; integer types always decode", typ, regs, err)
			}
			return
		}
		if math.IsNaN(v) || math.IsInf(v, 0) {
			t.Fatalf("%s % X = %v; only finite values may pass", typ, regs, v)
		}
		// Re-encode and compare: the decoded value must be what the words say.
		hi, lo := a, b
		if low && len(regs) == 2 {
			hi, lo = b, a
		}
		var want float64
		u := uint32(hi)<<16 | uint32(lo)
		switch typ {
		case "int16":
			want = float64(int16(a))
		case "uint16":
			want = float64(a)
		case "int32":
			want = float64(int32(u))
		case "uint32":
			want = float64(u)
		case "float32":
			var buf [4]byte
			binary.BigEndian.PutUint32(buf[:], u)
			want = float64(math.Float32frombits(binary.BigEndian.Uint32(buf[:])))
			// The decoder gives the shortest decimal that reads back as
			// the same binary32, so compare at float32 precision.
			v = float64(float32(v))
		}
		if v != want {
			t.Fatalf("%s % X low-first=%v = %v, want %v", typ, regs, low, v, want)
		}
	})
}

func FuzzASCIIReply(f *testing.F) {
	for _, s := range []string{"a:1.23E-04/fine\r\n", "a: 7.5E+02/over b:3E-6/fine\r\n", "a:5.0-4/under\r\n", "a:/fine\r\n", "\x15\r\n", "a:1/weird\r\n", "garbage"} {
		f.Add(s)
	}
	o := drivers.ASCIIOptions{
		Steps:  []drivers.Step{{Send: "EACH\r", Expect: `(?P<gauge>\w):(?P<value>[^/]*)/(?P<status>[a-z]+)`}},
		Status: map[string]drivers.Status{"fine": drivers.StatusOK, "under": drivers.StatusUnderRange, "over": drivers.StatusOverRange},
	}
	f.Fuzz(func(t *testing.T, reply string) {
		d, err := drivers.NewASCII(driverstest.Lines(reply), drivers.Options{Gauge: "g", ASCII: o})
		if err != nil {
			t.Fatal(err)
		}
		all, err := d.ReadAll(context.Background())
		var ge *drivers.GaugeError
		if err != nil && !errors.As(err, &ge) {
			t.Fatalf("error %v is not a *GaugeError", err)
		}
		for k, r := range all {
			if r.Status == drivers.StatusOK && (math.IsNaN(r.Raw) || math.IsInf(r.Raw, 0)) {
				t.Fatalf("channel %q: ok reading with value %v", k, r.Raw)
			}
		}
	})
}
