package store

import (
	"math"
	"testing"
	"time"
)

func TestRollupsOfAHandWorkedMinute(t *testing.T) {
	// Expected values by hand: minute 22:00 holds 1.5 and 2.5 (the
	// quality-2 point counts but is not averaged): min 1.5, max 2.5, mean 2;
	// minute 22:01 holds a NaN (not averaged) and 4; the hour: min 1.5,
	// max 4, mean (1.5+2.5+4)/3 = 8/3.
	at := func(m, s int) time.Time { return time.Date(2031, 3, 14, 22, m, s, 0, time.UTC) }
	pts := []Point{{At: at(0, 10), Value: 1.5}, {At: at(0, 40), Value: 2.5}, {At: at(0, 50), Value: 99, Quality: 2},
		{At: at(1, 5), Value: math.NaN()}, {At: at(1, 30), Value: 4}}
	mins := ComputeRollups(pts, RollupMinute)
	if len(mins) != 2 {
		t.Fatalf("got %d minute roll-ups, want 2: %+v", len(mins), mins)
	}
	check := func(name string, r Rollup, start time.Time, count, valid int, lo, hi, mean, first, last float64) {
		t.Helper()
		if !r.Start.Equal(start) || r.Count != count || r.Valid != valid || r.Min != lo || r.Max != hi ||
			math.Abs(r.Mean()-mean) > 1e-15 || r.First.Value != first || r.Last.Value != last {
			t.Errorf("%s: got %+v (mean %v); want start %s, count %d, valid %d, min %v, max %v, mean %v, first %v, last %v",
				name, r, r.Mean(), start, count, valid, lo, hi, mean, first, last)
		}
	}
	check("22:00", mins[0], at(0, 0), 3, 2, 1.5, 2.5, 2, 1.5, 2.5)
	check("22:01", mins[1], at(1, 0), 2, 1, 4, 4, 4, 4, 4)
	hours := ComputeRollups(pts, RollupHour)
	check("22h", hours[0], at(0, 0), 5, 3, 1.5, 4, 8.0/3, 1.5, 4)
	check("22h from minutes", MergeRollups(mins[0], mins[1]), at(0, 0), 5, 3, 1.5, 4, 8.0/3, 1.5, 4)
}

func TestRollupIntervalsBefore1970RoundTowardsThePast(t *testing.T) {
	// 1969-12-31 23:59:30 is -30 s since 1970: its minute starts at -60 s
	// (23:59:00), its hour at -3600 s (23:00:00), by hand.
	p := Point{At: time.Date(1969, 12, 31, 23, 59, 30, 0, time.UTC), Value: 1}
	if got := ComputeRollups([]Point{p}, RollupMinute)[0].Start; !got.Equal(time.Date(1969, 12, 31, 23, 59, 0, 0, time.UTC)) {
		t.Errorf("minute starts %s, want 23:59:00", got)
	}
	if got := ComputeRollups([]Point{p}, RollupHour)[0].Start; !got.Equal(time.Date(1969, 12, 31, 23, 0, 0, 0, time.UTC)) {
		t.Errorf("hour starts %s, want 23:00:00", got)
	}
}

func TestRollupSumIsCompensated(t *testing.T) {
	// The example that separates Neumaier's sum from Kahan's and the plain
	// one: 1 + 1e100 + 1 − 1e100 is 2; a plain float64 sum gives 0 (from
	// memory: the "Kahan summation algorithm" literature, Neumaier 1974).
	at := time.Date(2031, 3, 14, 22, 0, 0, 0, time.UTC)
	var pts []Point
	for i, v := range []float64{1, 1e100, 1, -1e100} {
		pts = append(pts, Point{At: at.Add(time.Duration(i) * time.Second), Value: v})
	}
	if r := ComputeRollups(pts, RollupMinute)[0]; r.Sum() != 2 || r.Mean() != 0.5 {
		t.Errorf("sum %v, mean %v; want 2 and 0.5", r.Sum(), r.Mean())
	}
}

func TestHourRollupsFromMinutesMatchTheHourItself(t *testing.T) {
	pts := night8()["chamber"]
	hours := ComputeRollups(pts, RollupHour)
	mins := ComputeRollups(pts, RollupMinute)
	if len(hours) != 8 { // polls from 21:00:00.014 to 04:59:59.914 (±jitter): eight clock hours
		t.Fatalf("got %d hours, want 8", len(hours))
	}
	j := 0
	for _, h := range hours {
		acc := newRollup(h.Start, 0)
		acc.End = h.Start
		for ; j < len(mins) && mins[j].Start.Before(h.End); j++ {
			acc = MergeRollups(acc, mins[j])
		}
		if acc.Count != h.Count || acc.Valid != h.Valid || acc.Min != h.Min || acc.Max != h.Max ||
			!sameBits(acc.First, h.First) || !sameBits(acc.Last, h.Last) || !acc.End.Equal(h.End) ||
			math.Abs(acc.Mean()-h.Mean()) > 1e-15*math.Abs(h.Mean()) {
			t.Fatalf("hour %s from minutes %+v (mean %v), directly %+v (mean %v)", h.Start, acc, acc.Mean(), h, h.Mean())
		}
	}
	var n int
	for _, h := range hours {
		n += h.Count
	}
	if n != len(pts) {
		t.Fatalf("hours count %d points, want %d", n, len(pts))
	}
}

func BenchmarkRollupsOfANight(b *testing.B) {
	pts := night8()["chamber"]
	for b.Loop() {
		ComputeRollups(pts, RollupMinute)
	}
	b.ReportMetric(float64(len(pts))*float64(b.N)/b.Elapsed().Seconds(), "samples/s")
}
