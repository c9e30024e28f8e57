package sim

import (
	"context"
	"testing"
	"time"
)

// BenchmarkRead is one Pirani read on the demo chamber, the clock moving one
// simulated second per read as a 1 s poll would.
func BenchmarkRead(b *testing.B) {
	ch, clk := newTestChamber(b, Demo())
	in, err := ch.Instrument(InstrumentConfig{Name: "pirani", Kind: KindPirani})
	if err != nil {
		b.Fatal(err)
	}
	ctx := context.Background()
	b.ReportAllocs()
	i := 0
	for b.Loop() {
		i++
		clk.at(time.Hour + time.Duration(i%86400)*time.Second)
		if _, err := in.Read(ctx); err != nil {
			b.Fatal(err)
		}
	}
}

// BenchmarkDay integrates one simulated day of the demo scenario in one call
// and reports the integration sub-steps it took.
func BenchmarkDay(b *testing.B) {
	b.ReportAllocs()
	var steps int64
	for b.Loop() {
		ch, clk := newTestChamber(b, Demo())
		stateAt(ch, clk, 24*time.Hour)
		steps = ch.substeps
	}
	b.ReportMetric(float64(steps), "substeps/day")
}

// BenchmarkDayPolled integrates one simulated day asked for every simulated
// second, as a 1 s poll of one gauge does.
func BenchmarkDayPolled(b *testing.B) {
	b.ReportAllocs()
	var steps int64
	for b.Loop() {
		ch, clk := newTestChamber(b, Demo())
		for s := range 86400 {
			stateAt(ch, clk, time.Duration(s+1)*time.Second)
		}
		steps = ch.substeps
	}
	b.ReportMetric(float64(steps), "substeps/day")
}
