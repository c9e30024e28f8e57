package seriesio

import (
	"math"
	"testing"
	"time"

	"holdfast/daemon/store"
)

// An import writes samples into a store that already holds others (late,
// interleaved, with an over-range stretch): the store's roll-ups must be
// those of all the samples together.
func TestImportKeepsRollupsWithTheSamples(t *testing.T) {
	src, _ := openStore(t)
	for i := range 600 { // ten minutes at 1 Hz, every third sample exported and imported
		q := uint8(0)
		if i >= 200 && i < 230 {
			q = 1 // over-range: counted, not in min/max
		}
		src.Append("g", store.Point{At: night0.Add(time.Duration(i) * time.Second), Raw: float64(i), Value: 1e-3 * float64(i%97), Quality: q})
	}
	if err := src.Flush(); err != nil {
		t.Fatal(err)
	}
	dst, _ := openStore(t)
	for i := range 600 {
		if i%3 != 0 { // the others are in the destination already
			dst.Append("g", store.Point{At: night0.Add(time.Duration(i) * time.Second), Raw: float64(i), Value: 1e-3 * float64(i%97)})
		}
	}
	if err := dst.Flush(); err != nil {
		t.Fatal(err)
	}
	path := exportCSV(t, src, "g")
	if _, err := (Import{Name: path}).Run(dst, fileOpener(path)); err != nil {
		t.Fatal(err)
	}
	mins, err := dst.Rollups("g", store.TierMinute, night0, night0.Add(time.Hour))
	if err != nil || len(mins) != 10 {
		t.Fatalf("%d minute roll-ups, %v; want 10", len(mins), err)
	}
	for _, m := range mins { // a plain aggregate of what the store holds, valid samples only in min/max
		n, notOK, lo, hi := 0, 0, math.Inf(1), math.Inf(-1)
		for _, p := range everything(t, dst, "g") {
			if p.At.Before(m.Start) || !p.At.Before(m.End) {
				continue
			}
			n++
			if p.Quality != 0 {
				notOK++
				continue
			}
			lo, hi = min(lo, p.Value), max(hi, p.Value)
		}
		if m.Count != n || m.NotOK != notOK || m.Min != lo || m.Max != hi {
			t.Errorf("minute %s: count %d (%d not ok), min %g, max %g; the samples give %d (%d), %g, %g",
				m.Start, m.Count, m.NotOK, m.Min, m.Max, n, notOK, lo, hi)
		}
	}
}

// A query says what its samples were chosen from: the raw samples for a
// short span, the minute roll-ups when the buckets are a minute wide or
// more, and the roll-ups where retention already took the raw samples.
func TestQuerySaysItsResolution(t *testing.T) {
	db, _ := openStore(t)
	for i := range 4 * 3600 { // 4 h at 1 Hz
		db.Append("g", store.Point{At: night0.Add(time.Duration(i) * time.Second), Raw: 1, Value: float64(i)})
	}
	if err := db.Flush(); err != nil {
		t.Fatal(err)
	}
	run := func(from, to time.Time, points int) SeriesResult {
		res, err := Query{Series: []string{"g"}, From: from, To: to, Points: points}.Run(db)
		if err != nil {
			t.Fatal(err)
		}
		return res.Series[0]
	}
	// 10 min at 1000 points: every sample, raw. 4 h at 1000 points: buckets
	// of 4 h / 332 = 43 s, raw; at 200 points, 4 h / 66 = 3.6 min: minutes.
	for _, c := range []struct {
		span   time.Duration
		points int
		want   string
	}{{10 * time.Minute, 1000, "raw"}, {4 * time.Hour, 1000, "raw"}, {4 * time.Hour, 200, "minute"}} {
		s := run(night0, night0.Add(c.span), c.points)
		if s.Resolution != c.want || s.Stored != int(c.span/time.Second) {
			t.Errorf("%s at %d points: resolution %q, %d stored; want %q, %d", c.span, c.points, s.Resolution, s.Stored, c.want, int(c.span/time.Second))
		}
	}
	if _, err := db.DeleteBefore("g", night0.Add(2*time.Hour)); err != nil {
		t.Fatal(err)
	}
	s := run(night0, night0.Add(time.Hour), 1000) // raw gone: minutes, all 3600 samples accounted for
	if s.Resolution != "minute" || s.Stored != 3600 || len(s.Samples) == 0 {
		t.Errorf("after raw retention: resolution %q, %d stored, %d entries; want minute and 3600", s.Resolution, s.Stored, len(s.Samples))
	}
}
