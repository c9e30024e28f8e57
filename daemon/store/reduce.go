package store

import (
	"math"
	"slices"
	"time"
)

// Reduce returns at most points points of series with from ≤ At < to, in
// time order, for plotting: the span is cut into points/5 equal buckets and
// each keeps its first, lowest, highest and last ok point, and the first
// not-ok point as a marker.
// No point is made up: every one returned was stored.
//
// placeholder; replaced by the queries work.
func (db *DB) Reduce(series string, from, to time.Time, points int) ([]Point, error) {
	if points < 5 {
		points = 5
	}
	span := to.Sub(from)
	if span <= 0 {
		return nil, nil
	}
	n := points / 5
	type bucket struct {
		first, lo, hi, last, bad Point
		ok, hasBad               bool
	}
	bs := make([]bucket, n)
	err := db.Range(series, from, to, func(p Point) bool {
		i := min(int(float64(p.At.Sub(from))/float64(span)*float64(n)), n-1)
		b := &bs[i]
		if p.Quality != 0 || math.IsNaN(p.Value) {
			if !b.hasBad {
				b.bad, b.hasBad = p, true
			}
			return true
		}
		if !b.ok {
			b.first, b.lo, b.hi, b.ok = p, p, p, true
		}
		if p.Value < b.lo.Value {
			b.lo = p
		}
		if p.Value > b.hi.Value {
			b.hi = p
		}
		b.last = p
		return true
	})
	out := make([]Point, 0, points)
	for _, b := range bs {
		var pts []Point
		if b.ok {
			pts = append(pts, b.first, b.lo, b.hi, b.last)
		}
		if b.hasBad {
			pts = append(pts, b.bad)
		}
		slices.SortStableFunc(pts, func(a, b Point) int { return a.At.Compare(b.At) })
		pts = slices.CompactFunc(pts, func(a, b Point) bool { return a.At.Equal(b.At) && a.Quality == b.Quality })
		out = append(out, pts...)
	}
	return out, err
}
