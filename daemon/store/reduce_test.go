package store

import (
	"math"
	"slices"
	"testing"
	"time"
)

// bumpyNight returns 8 h of invented 1 Hz samples with the features a
// reduced plot must keep: a planted maximum and minimum, a 30-minute gap
// (no samples from 02:00 to 02:30 after the start) and a 5-minute
// over-range stretch (quality 1) starting at 04:00.
func bumpyNight() (pts []Point, gapFrom, gapTo time.Time, maxAt, minAt time.Time) {
	const n = 8 * 3600
	gapFrom, gapTo = nightStart.Add(2*time.Hour), nightStart.Add(2*time.Hour+30*time.Minute)
	for i := range n {
		at := nightStart.Add(time.Duration(i) * time.Second)
		if !at.Before(gapFrom) && at.Before(gapTo) {
			continue
		}
		v := 1e-3 * (2 + math.Sin(float64(i)/500)) // between 1e-3 and 3e-3 Pa
		p := Point{At: at, Raw: v / 100, Value: v}
		switch {
		case i == 12_345:
			p.Value, maxAt = 0.5, at // a burst
		case i == 20_000:
			p.Value, minAt = 1e-6, at // a dip
		case i >= 4*3600 && i < 4*3600+300:
			p.Quality, p.Value = 1, math.Inf(1)
		}
		pts = append(pts, p)
	}
	return pts, gapFrom, gapTo, maxAt, minAt
}

func TestReduceKeepsExtremesGapsAndQuality(t *testing.T) {
	pts, gapFrom, gapTo, maxAt, minAt := bumpyNight()
	db := storeFlushed(t, pts)
	from, to := nightStart, nightStart.Add(8*time.Hour)
	stored := map[int64]Point{}
	for _, p := range pts {
		stored[p.At.UnixNano()] = p
	}
	for _, n := range []int{1000, 300, 60} {
		got, err := db.Reduce("g", from, to, n)
		if err != nil {
			t.Fatal(err)
		}
		if len(got) > n || len(got) < n/2 {
			t.Fatalf("%d points: got %d", n, len(got))
		}
		for i, p := range got {
			if s, ok := stored[p.At.UnixNano()]; !ok || !sameBits(s, p) {
				t.Fatalf("%d points: point %d %+v is not a stored point", n, i, p)
			}
			if i > 0 && p.At.Before(got[i-1].At) {
				t.Fatalf("%d points: out of time order at %d", n, i)
			}
		}
		has := func(at time.Time) bool { return slices.ContainsFunc(got, func(p Point) bool { return p.At.Equal(at) }) }
		if !has(maxAt) || !has(minAt) {
			t.Errorf("%d points: the planted maximum (%v) or minimum (%v) is missing", n, has(maxAt), has(minAt))
		}
		bad := 0
		for _, p := range got {
			if p.Quality == 1 {
				bad++
			}
		}
		if bad < 2 {
			t.Errorf("%d points: %d over-range markers; want the first and last of the stretch at least", n, bad)
		}
		// The gap rule, both ways: the consecutive points of the result
		// further apart than GapLimit are exactly the consecutive stored
		// points further apart than GapLimit. At 1000 and 300 points that
		// is the 30 min gap alone; at 60 points (48 min buckets) nothing.
		limit := GapLimit(got, from, to, n)
		var gaps, want [][2]time.Time
		for i := 1; i < len(got); i++ {
			if got[i].At.Sub(got[i-1].At) > limit {
				gaps = append(gaps, [2]time.Time{got[i-1].At, got[i].At})
			}
		}
		for i := 1; i < len(pts); i++ {
			if pts[i].At.Sub(pts[i-1].At) > limit {
				want = append(want, [2]time.Time{pts[i-1].At, pts[i].At})
			}
		}
		if !slices.Equal(gaps, want) {
			t.Errorf("%d points: gaps %v (limit %s); want %v", n, gaps, limit, want)
		}
		if n >= 300 && (len(gaps) != 1 || gaps[0] != [2]time.Time{gapFrom.Add(-time.Second), gapTo}) {
			t.Errorf("%d points: gaps %v; want the 30 min gap alone", n, gaps)
		}
	}
}

func TestReduceReturnsEverythingWhenFewPoints(t *testing.T) {
	pts := seconds(50)
	db := storeFlushed(t, pts)
	got, err := db.Reduce("g", nightStart, nightStart.Add(time.Hour), 50)
	if err != nil {
		t.Fatal(err)
	}
	if len(got) != 50 || !slices.EqualFunc(got, pts, sameBits) {
		t.Fatalf("got %d points; want the 50 stored ones unchanged", len(got))
	}
}

func TestReduceTinyRequestKeepsMinAndMax(t *testing.T) {
	pts := seconds(100)
	pts[37].Value, pts[61].Value = -5, 1e9
	db := storeFlushed(t, pts)
	for n := 2; n < 6; n++ {
		got, err := db.Reduce("g", nightStart, nightStart.Add(time.Hour), n)
		if err != nil {
			t.Fatal(err)
		}
		if len(got) > n || !slices.ContainsFunc(got, func(p Point) bool { return p.Value == -5 }) ||
			!slices.ContainsFunc(got, func(p Point) bool { return p.Value == 1e9 }) {
			t.Errorf("%d points: got %+v; want at most %d with -5 and 1e9", n, got, n)
		}
	}
}

func TestReduceRefusesBadArguments(t *testing.T) {
	db := storeFlushed(t, seconds(10))
	for _, c := range []struct {
		name     string
		from, to time.Time
		points   int
	}{
		{"from after to", nightStart.Add(time.Hour), nightStart, 100},
		{"empty span", nightStart, nightStart, 100},
		{"one point", nightStart, nightStart.Add(time.Hour), 1},
		{"too many", nightStart, nightStart.Add(time.Hour), MaxReducePoints + 1},
	} {
		t.Run(c.name, func(t *testing.T) {
			if _, err := db.Reduce("g", c.from, c.to, c.points); err == nil {
				t.Fatal("Reduce succeeded; want an error")
			}
		})
	}
}

func TestScanMatchesRangeAcrossSteps(t *testing.T) {
	pts := seconds(200 * 1024) // 200 chunks: four steps of Scan
	db := storeFlushed(t, pts)
	late := Point{At: nightStart.Add(300 * 1024 * time.Second), Raw: 7}
	db.Append("g", late) // buffered, not flushed: Scan sees it too
	var got []Point
	if err := db.Scan("g", nightStart.Add(-time.Hour), nightStart.Add(400*1024*time.Second), func(p Point) bool {
		got = append(got, p)
		return true
	}); err != nil {
		t.Fatal(err)
	}
	want := append(slices.Clone(pts), late)
	if !slices.EqualFunc(got, want, sameBits) {
		t.Fatalf("Scan gave %d points; want %d, equal", len(got), len(want))
	}
	n := 0
	db.Scan("g", nightStart, nightStart.Add(time.Hour*1000), func(Point) bool { n++; return n < 70_000 })
	if n != 70_000 {
		t.Fatalf("Scan went on after fn returned false: %d calls", n)
	}
}

func TestStatsCountsEverySeries(t *testing.T) {
	db := storeFlushed(t, seconds(3000))
	appendAll(db, "h", seconds(10))
	if err := db.Flush(); err != nil {
		t.Fatal(err)
	}
	st, err := db.SeriesStats()
	if err != nil {
		t.Fatal(err)
	}
	if len(st) != 2 || st[0].Series != "g" || st[0].Samples != 3000 || st[1].Samples != 10 {
		t.Fatalf("got %+v", st)
	}
	if !st[0].First.Equal(nightStart) || !st[0].Last.Equal(nightStart.Add(2999*time.Second)) {
		t.Errorf("span %s … %s; want %s … +2999 s", st[0].First, st[0].Last, nightStart)
	}
	// 3000 points at 1024 per chunk need at least 3 chunks.
	if st[0].Chunks < 3 || st[0].PayloadBytes <= 0 || st[0].BytesPerSample() <= 0 {
		t.Errorf("chunks %d, payload %d", st[0].Chunks, st[0].PayloadBytes)
	}
	fs, err := db.FileStats()
	if err != nil {
		t.Fatal(err)
	}
	if fs.FileBytes < fs.UsedBytes || fs.UsedBytes <= 0 || fs.PageSize <= 0 {
		t.Errorf("file stats %+v", fs)
	}
}
