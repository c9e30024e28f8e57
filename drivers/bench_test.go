package drivers_test

import (
	"context"
	"testing"

	"holdfast/drivers"
)

// fixedLink answers every exchange with the same bytes and no I/O, so a
// benchmark over it measures a driver's own CPU cost per exchange.
type fixedLink []byte

func (f fixedLink) Exchange(ctx context.Context, req []byte, until byte) ([]byte, error) {
	return f, nil
}

func benchRead(b *testing.B, d drivers.Driver) {
	ctx := context.Background()
	b.ReportAllocs()
	for b.Loop() {
		if _, err := d.Read(ctx); err != nil {
			b.Fatal(err)
		}
	}
}

func BenchmarkASCIIExchange(b *testing.B) {
	d, err := drivers.NewASCII(fixedLink("v=1.23E-04;s=fine\r\n"), drivers.Options{Gauge: "g", ASCII: simpleExchange})
	if err != nil {
		b.Fatal(err)
	}
	benchRead(b, d)
}

func BenchmarkASCIIChecksumExchange(b *testing.B) {
	reply := "!01/+1.5E-3/23\r\n" // the sum worked out in TestASCIIChecksumSentAndVerified
	d, err := drivers.NewASCII(fixedLink(reply), drivers.Options{Gauge: "g", ASCII: summed})
	if err != nil {
		b.Fatal(err)
	}
	benchRead(b, d)
}

func BenchmarkASCIIThreeGaugeReply(b *testing.B) {
	o := drivers.ASCIIOptions{Steps: []drivers.Step{{Send: "EACH\r", Expect: `(?P<gauge>[a-z]):(?P<value>\S+)`}}}
	d, err := drivers.NewASCII(fixedLink("a:1.2E-3 b:4.0E-6 c:9.9E+2\r\n"), drivers.Options{Gauge: "g", ASCII: o})
	if err != nil {
		b.Fatal(err)
	}
	ctx := context.Background()
	b.ReportAllocs()
	for b.Loop() {
		if _, err := d.ReadAll(ctx); err != nil {
			b.Fatal(err)
		}
	}
}

func BenchmarkSCPIExchange(b *testing.B) {
	d, err := drivers.NewSCPI(fixedLink("+5.50123400E+00\n"), drivers.Options{Gauge: "g", SCPI: drivers.SCPIOptions{Query: "MEAS:VOLT:DC?"}})
	if err != nil {
		b.Fatal(err)
	}
	benchRead(b, d)
}

func BenchmarkDecodeFloat32(b *testing.B) {
	regs := []uint16{0x3A23, 0xD70A}
	b.ReportAllocs()
	for b.Loop() {
		if _, err := drivers.DecodeRegisters(regs, "float32", false); err != nil {
			b.Fatal(err)
		}
	}
}
