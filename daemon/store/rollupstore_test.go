package store

import (
	"math"
	"math/rand/v2"
	"os"
	"path/filepath"
	"slices"
	"sync"
	"testing"
	"time"
)

// plainRollup is the reference a stored roll-up must equal: a direct
// aggregate of the interval's points written for the test, one pass, plain
// comparisons and a plain sum. Valid points are those of quality 0 with a
// finite value (the rule doc.go states); every point counts in count.
type plainRollup struct {
	start               time.Time
	count, valid, notOK int
	min, max, sum       float64
	first, last         Point
	minAt, maxAt        time.Time
	firstMark, lastMark Point
	hasValid, hasMarks  bool
}

// plainRollups aggregates time-sorted points (equal times in the store's
// order) per interval of width starting on a whole multiple of it.
func plainRollups(pts []Point, width time.Duration) map[int64]*plainRollup {
	out := map[int64]*plainRollup{}
	for _, p := range pts {
		s := p.At.UnixNano() / int64(width) * int64(width) // the test's times are after 1970
		r := out[s]
		if r == nil {
			r = &plainRollup{start: time.Unix(0, s).UTC()}
			out[s] = r
		}
		r.count++
		if p.Quality != 0 {
			r.notOK++
		}
		if p.Quality != 0 || math.IsNaN(p.Value) || math.IsInf(p.Value, 0) {
			if !r.hasMarks {
				r.firstMark = p
			}
			r.lastMark, r.hasMarks = p, true
			continue
		}
		if !r.hasValid {
			r.first, r.min, r.max, r.minAt, r.maxAt = p, p.Value, p.Value, p.At, p.At
		}
		r.valid++
		r.sum += p.Value
		if p.Value < r.min {
			r.min, r.minAt = p.Value, p.At
		}
		if p.Value > r.max {
			r.max, r.maxAt = p.Value, p.At
		}
		r.last, r.hasValid = p, true
	}
	return out
}

// checkRollups fails unless db's stored roll-ups of series equal the plain
// aggregate of its stored points, interval by interval, in both tiers.
func checkRollups(t *testing.T, db *DB, series string) {
	t.Helper()
	pts := all(t, db, series)
	for _, tier := range []Tier{TierMinute, TierHour} {
		want := plainRollups(pts, tier.Width())
		got, err := db.Rollups(series, tier, minTime, maxTime)
		if err != nil {
			t.Fatalf("%s %s roll-ups: %v", series, tier, err)
		}
		if len(got) != len(want) {
			t.Fatalf("%s: %d %s roll-ups, want %d (one per interval holding points)", series, len(got), tier, len(want))
		}
		for _, g := range got {
			w := want[g.Start.UnixNano()]
			if w == nil {
				t.Fatalf("%s: a %s roll-up at %s, an interval with no point", series, tier, g.Start)
			}
			bad := g.Count != w.count || g.Valid != w.valid || g.NotOK != w.notOK || !g.End.Equal(g.Start.Add(tier.Width()))
			if w.hasValid {
				// The plain sum may differ from the compensated one in the last digits.
				bad = bad || g.Min != w.min || g.Max != w.max || !sameBits(g.First, w.first) || !sameBits(g.Last, w.last) ||
					!g.MinPoint.At.Equal(w.minAt) || !g.MaxPoint.At.Equal(w.maxAt) ||
					math.Abs(g.Mean()-w.sum/float64(w.valid)) > 1e-12*math.Max(math.Abs(w.sum/float64(w.valid)), 1e-300)
			} else {
				bad = bad || !math.IsNaN(g.Min) || !math.IsNaN(g.Max) || !math.IsNaN(g.Mean())
			}
			if w.hasMarks {
				bad = bad || !sameBits(g.FirstMark, w.firstMark) || !sameBits(g.LastMark, w.lastMark)
			}
			if bad {
				t.Fatalf("%s: %s roll-up at %s:\n got %+v (mean %v)\nwant %+v", series, tier, g.Start, g, g.Mean(), *w)
			}
		}
	}
}

// messyPoints returns n points over about span from t0, with every quality,
// NaN and ±Inf values with quality 0, equal values (ties for min and
// max) and duplicate times.
func messyPoints(rng *rand.Rand, t0 time.Time, n int, span time.Duration) []Point {
	pts := make([]Point, n)
	for i := range pts {
		at := t0.Add(time.Duration(rng.Int64N(int64(span))).Truncate(time.Millisecond))
		if i > 0 && rng.IntN(20) == 0 {
			at = pts[i-1].At // a duplicate time
		}
		v := float64(rng.IntN(50)) * 1e-3 // few distinct values: ties
		q := uint8(0)
		switch rng.IntN(12) {
		case 0:
			q = uint8(1 + rng.IntN(5))
		case 1:
			v = math.NaN()
		case 2:
			v = math.Inf(1 - 2*rng.IntN(2))
		}
		pts[i] = Point{At: at, Raw: float64(i), Value: v, Quality: q, Calibration: uint32(rng.IntN(3))}
	}
	return pts
}

func TestStoredRollupsEqualAPlainAggregateOfTheirPoints(t *testing.T) {
	for seed := range uint64(4) {
		rng := rand.New(rand.NewPCG(seed, 11))
		db := openTemp(t, Options{})
		t0 := time.Date(2032, 1, 9, 21, 40, 0, 0, time.UTC)
		pts := messyPoints(rng, t0, 3000, 3*time.Hour)
		if seed%2 == 0 { // in time order, as a poller appends, with a few late ones
			slices.SortFunc(pts, func(a, b Point) int { return a.At.Compare(b.At) })
			for k := 0; k < 30; k++ {
				i, j := rng.IntN(len(pts)), rng.IntN(len(pts))
				pts[i], pts[j] = pts[j], pts[i]
			}
		}
		for len(pts) > 0 { // flushed in batches of random size
			k := min(len(pts), 1+rng.IntN(200))
			appendAll(db, "g", pts[:k])
			pts = pts[k:]
			if err := db.Flush(); err != nil {
				t.Fatal(err)
			}
		}
		checkRollups(t, db, "g")
	}
}

func TestRollupGroupsRoundTrip(t *testing.T) {
	rng := rand.New(rand.NewPCG(3, 4))
	t0 := time.Date(2032, 1, 9, 22, 0, 0, 0, time.UTC)
	for i := range 200 {
		pts := messyPoints(rng, t0, 1+rng.IntN(400), time.Hour)
		if i%3 == 0 { // nanosecond offsets too
			for j := range pts {
				pts[j].At = pts[j].At.Add(time.Duration(rng.IntN(1e6)))
			}
		}
		slices.SortStableFunc(pts, func(a, b Point) int { return a.At.Compare(b.At) })
		rs := ComputeRollups(pts, RollupMinute)
		got, err := decodeGroup(encodeGroup(t0, RollupMinute, rs), t0, RollupMinute, time.Hour)
		if err != nil {
			t.Fatal(err)
		}
		if len(got) != len(rs) {
			t.Fatalf("%d roll-ups back of %d", len(got), len(rs))
		}
		for k, r := range rs {
			g := got[k]
			same := g.Start.Equal(r.Start) && g.End.Equal(r.End) && g.Count == r.Count && g.Valid == r.Valid &&
				g.NotOK == r.NotOK && math.Float64bits(g.Sum()) == math.Float64bits(r.Sum())
			for j, p := range r.slots() {
				same = same && sameBits(*g.slots()[j], *p)
			}
			if r.Valid > 0 {
				same = same && g.Min == r.Min && g.Max == r.Max
			}
			if !same {
				t.Fatalf("round trip of %+v gave %+v", r, g)
			}
		}
	}
	b := encodeGroup(t0, RollupMinute, ComputeRollups([]Point{{At: t0, Value: 1}}, RollupMinute))
	b[len(b)-1] ^= 1
	if _, err := decodeGroup(b, t0, RollupMinute, time.Hour); err == nil {
		t.Error("a damaged group decoded without an error")
	}
}

func TestMigrationBuildsRollupsOfSchema1And2Files(t *testing.T) {
	for _, fixture := range []string{v1Fixture, "testdata/schema2.db"} {
		t.Run(filepath.Base(fixture), func(t *testing.T) {
			b, err := os.ReadFile(fixture)
			if err != nil {
				t.Fatal(err)
			}
			path := filepath.Join(t.TempDir(), "copy.db")
			if err := os.WriteFile(path, b, 0o600); err != nil {
				t.Fatal(err)
			}
			if schema, _ := fileFormat(t, path); schema >= 3 {
				t.Fatalf("fixture %s has schema %d; want an older one", fixture, schema)
			}
			db, err := Open(path, Options{})
			if err != nil {
				t.Fatal(err)
			}
			for name := range fixtureSeries() {
				if n, _ := db.Count(name); n == 0 {
					t.Fatalf("%s: no points in %s", fixture, name)
				}
				checkRollups(t, db, name)
			}
			db.Close()
			if schema, _ := fileFormat(t, path); schema != schemaVersion {
				t.Errorf("schema %d after the migration, want %d", schema, schemaVersion)
			}
		})
	}
}

func TestReadOnlySchema2FileReducesFromItsPoints(t *testing.T) {
	db, err := Open("testdata/schema2.db", Options{ReadOnly: true})
	if err != nil {
		t.Fatal(err)
	}
	defer db.Close()
	pts := all(t, db, "chamber-ion")
	from, to := pts[0].At, pts[len(pts)-1].At.Add(time.Millisecond)
	r, err := db.ReduceTiered("chamber-ion", from, to, 60) // buckets of about 2 min: roll-ups if there were any
	if err != nil || r.Tier != TierRaw || r.Count != len(pts) {
		t.Fatalf("tier %s, %d points counted, %v; want raw (a read-only schema-2 file has no roll-ups) and %d", r.Tier, r.Count, err, len(pts))
	}
}

func TestRewriteKeepsRollupsConsistent(t *testing.T) {
	rng := rand.New(rand.NewPCG(5, 6))
	db := openTemp(t, Options{})
	t0 := time.Date(2032, 1, 9, 21, 0, 0, 0, time.UTC)
	pts := messyPoints(rng, t0, 5000, 4*time.Hour)
	slices.SortFunc(pts, func(a, b Point) int { return a.At.Compare(b.At) })
	appendAll(db, "g", pts)
	if err := db.Flush(); err != nil {
		t.Fatal(err)
	}
	// Reprocessing: new values for 21:50–23:10, one in ten turned over-range.
	n, err := db.Rewrite("g", t0.Add(50*time.Minute), t0.Add(130*time.Minute), func(p Point) Point {
		p.Value = p.Raw * 1e-3
		if int(p.Raw)%10 == 0 {
			p.Quality = 1
		}
		return p
	})
	if err != nil || n == 0 {
		t.Fatalf("Rewrite: %d, %v", n, err)
	}
	checkRollups(t, db, "g")
}

func TestCompactKeepsRollups(t *testing.T) {
	db := openTemp(t, Options{})
	pts := messyPoints(rand.New(rand.NewPCG(7, 8)), time.Date(2032, 1, 9, 21, 0, 0, 0, time.UTC), 2000, 2*time.Hour)
	appendAll(db, "g", pts)
	dst := filepath.Join(t.TempDir(), "compact.db")
	if err := db.Compact(dst); err != nil {
		t.Fatal(err)
	}
	c, err := Open(dst, Options{})
	if err != nil {
		t.Fatal(err)
	}
	defer c.Close()
	checkRollups(t, c, "g")
	a, _ := db.Rollups("g", TierMinute, minTime, maxTime)
	b, _ := c.Rollups("g", TierMinute, minTime, maxTime)
	if len(a) != len(b) {
		t.Fatalf("%d minute roll-ups after Compact, %d before", len(b), len(a))
	}
}

func TestRetentionKeepsRollupsAndQueriesUseThem(t *testing.T) {
	db := openTemp(t, Options{})
	t0 := time.Date(2032, 1, 9, 0, 0, 0, 0, time.UTC)
	var pts []Point
	for i := range 6 * 3600 { // 6 h at 1 Hz, a ramp
		pts = append(pts, Point{At: t0.Add(time.Duration(i) * time.Second), Raw: float64(i), Value: float64(i)})
	}
	appendAll(db, "g", pts)
	if err := db.Flush(); err != nil {
		t.Fatal(err)
	}
	cut := t0.Add(3*time.Hour + 30*time.Minute)
	n, err := db.DeleteBefore("g", cut)
	if err != nil || n == 0 {
		t.Fatalf("DeleteBefore: %d, %v", n, err)
	}
	hz, _ := db.Horizons("g")
	left := all(t, db, "g")
	if hz[TierRaw].IsZero() || hz[TierRaw].After(left[0].At) || hz[TierRaw].After(cut) {
		t.Fatalf("raw horizon %s; want one at or before the first point left (%s) and the cut (%s)", hz[TierRaw], left[0].At, cut)
	}
	mins, _ := db.Rollups("g", TierMinute, minTime, maxTime)
	if len(mins) != 6*60 {
		t.Fatalf("%d minute roll-ups after raw retention, want all 360", len(mins))
	}
	// A 2-hour span starting where the points are gone, at 20 points (buckets
	// of 12 min, wide enough) and at 1000 (7 s, narrow): minutes both times.
	for _, points := range []int{20, 1000} {
		r, err := db.ReduceTiered("g", t0.Add(time.Hour), t0.Add(3*time.Hour), points)
		if err != nil || r.Tier != TierMinute {
			t.Fatalf("%d points: tier %s, %v; want minute (raw is gone)", points, r.Tier, err)
		}
		// 7200 samples, values 3600..10799: both extremes, by hand.
		if r.Count != 7200 || r.Points[0].Value != 3600 || r.Points[len(r.Points)-1].Value != 10799 {
			t.Fatalf("%d points: count %d, from %v to %v; want 7200 samples from 3600 to 10799",
				points, r.Count, r.Points[0].Value, r.Points[len(r.Points)-1].Value)
		}
	}
	// Minute retention: the roll-ups of the first 2 h go; the hours stay.
	if n, err := db.DeleteRollupsBefore("g", TierMinute, t0.Add(2*time.Hour)); err != nil || n != 120 {
		t.Fatalf("DeleteRollupsBefore: %d, %v; want 120 minutes", n, err)
	}
	r, err := db.ReduceTiered("g", t0, t0.Add(2*time.Hour), 1000)
	if err != nil || r.Tier != TierHour || r.Count != 7200 {
		t.Fatalf("tier %s, count %d, %v; want hour and 7200 samples", r.Tier, r.Count, err)
	}
}

func TestRetentionLetsFlushesThrough(t *testing.T) {
	db := openTemp(t, Options{})
	t0 := time.Date(2032, 1, 9, 0, 0, 0, 0, time.UTC)
	for c := range 1500 { // an hour apart: 1500 chunks of one point, three retention transactions
		db.Append("old", Point{At: t0.Add(time.Duration(c) * time.Hour), Value: 1})
	}
	if err := db.Flush(); err != nil {
		t.Fatal(err)
	}
	pauses := 0
	betweenBatches = func() {
		// Retention is between two transactions: an Append and Flush of
		// another series must go through now, not wait for it to end.
		pauses++
		db.Append("live", Point{At: t0.Add(time.Duration(pauses) * time.Second), Value: 2})
		done := make(chan error, 1)
		go func() { done <- db.Flush() }()
		select {
		case err := <-done:
			if err != nil {
				t.Error(err)
			}
		case <-time.After(10 * time.Second):
			t.Error("Flush blocked while retention ran")
		}
	}
	defer func() { betweenBatches = nil }()
	var wg sync.WaitGroup
	wg.Go(func() {
		if _, err := db.DeleteBefore("old", t0.Add(2000*time.Hour)); err != nil {
			t.Error(err)
		}
		if _, err := db.DeleteRollupsBefore("old", TierMinute, t0.Add(2000*time.Hour)); err != nil {
			t.Error(err)
		}
	})
	wg.Wait()
	if pauses < 2 {
		t.Fatalf("retention ran in %d pauses; want several small transactions", pauses)
	}
	if n, _ := db.Count("live"); n != pauses {
		t.Fatalf("%d live points stored, want %d", n, pauses)
	}
	checkRollups(t, db, "live")
}

// snapTo returns where ReduceTiered places a point of [lo, hi) when it
// reads tier t: the start of the widest interval of t or below lying
// wholly in [lo, hi) that holds it (a minute for the raw ends), clamped to lo.
func snapTo(p Point, t Tier, lo, hi int64) int64 {
	ns := p.At.UnixNano()
	for ; t > TierRaw; t-- {
		w := int64(t.Width())
		if s := ns / w * w; s >= lo && s+w <= hi {
			return s
		}
	}
	return max(lo, ns/int64(time.Minute)*int64(time.Minute))
}

func TestReduceFromRollupsIsReduceWithBucketsOnWholeIntervals(t *testing.T) {
	rng := rand.New(rand.NewPCG(9, 10))
	t0 := time.Date(2032, 1, 9, 21, 0, 0, 0, time.UTC)
	pts := append(messyPoints(rng, t0, 60000, 40*24*time.Hour), messyPoints(rng, t0, 60000, 9*time.Hour)...)
	slices.SortFunc(pts, func(a, b Point) int { return a.At.Compare(b.At) })
	pts = slices.CompactFunc(pts, func(a, b Point) bool { return a.At.Equal(b.At) }) // distinct times: stream order is time order
	db := openTemp(t, Options{})
	appendAll(db, "g", pts[:len(pts)-50])
	if err := db.Flush(); err != nil {
		t.Fatal(err)
	}
	appendAll(db, "g", pts[len(pts)-50:]) // still buffered
	for _, c := range []struct {
		from, to time.Time
		points   int
		tier     Tier
	}{
		{t0.Add(17*time.Second + 3*time.Millisecond), t0.Add(8*time.Hour - 5*time.Second), 1000, TierMinute},
		{t0.Add(26*time.Minute + 17*time.Second), t0.Add(30*24*time.Hour + 11*time.Minute), 1000, TierHour},
		{t0.Add(20*24*time.Hour + 90*time.Second), t0.Add(41 * 24 * time.Hour), 200, TierHour}, // the buffered end
		{t0.Add(3*24*time.Hour + 7*time.Second), t0.Add(13 * 24 * time.Hour), 5000, TierMinute},
	} {
		lo, hi := c.from.UnixNano(), c.to.UnixNano()
		got, err := db.ReduceTiered("g", c.from, c.to, c.points)
		if err != nil || got.Tier != c.tier {
			t.Fatalf("%s–%s: tier %s, %v; want %s", c.from, c.to, got.Tier, err, c.tier)
		}
		ref := newReducer(lo, hi, c.points)
		n, notOK := 0, 0
		for _, p := range pts {
			if ns := p.At.UnixNano(); ns >= lo && ns < hi {
				ref.addAt(p, snapTo(p, c.tier, lo, hi))
				n++
				if p.Quality != 0 {
					notOK++
				}
			}
		}
		samePoints(t, got.Points, ref.result())
		if got.Count != n || got.NotOK != notOK {
			t.Errorf("counted %d points, %d not ok; want %d and %d", got.Count, got.NotOK, n, notOK)
		}
		// The span's extremes are among the points, by definition of the buckets.
		lowest, highest := math.Inf(1), math.Inf(-1)
		for _, p := range pts {
			if ns := p.At.UnixNano(); ns >= lo && ns < hi && isValid(p) {
				lowest, highest = min(lowest, p.Value), max(highest, p.Value)
			}
		}
		gl, gh := math.Inf(1), math.Inf(-1)
		for _, p := range got.Points {
			if isValid(p) {
				gl, gh = min(gl, p.Value), max(gh, p.Value)
			}
		}
		if gl != lowest || gh != highest || len(got.Points) > c.points {
			t.Errorf("%d points from %v to %v; want at most %d, from %v to %v", len(got.Points), gl, gh, c.points, lowest, highest)
		}
	}
}
