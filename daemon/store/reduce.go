package store

import (
	"fmt"
	"math/bits"
	"slices"
	"time"
)

// MaxReducePoints caps the points a reduced query may ask for; more are
// refused rather than silently cut, so a caller's plot never claims a
// resolution it did not get.
const MaxReducePoints = 100_000

// perBucket is how many points one bucket of Reduce can contribute: the
// first, minimum, maximum and last ok points, and the first and last point
// that is not ok.
const perBucket = 6

// Reduce returns at most points points of series in [from, to) chosen so a
// plot of them looks like a plot of all the data. When the span holds at
// most points points they are all returned, unchanged. Otherwise the span
// is cut into buckets of equal width, and each bucket contributes, in time
// order and without repeats, its first, minimum, maximum and last ok point
// (quality 0 and a finite value) and its
// first and last point that is not ok, so an over-range or fault stretch
// stays visible as markers at its ends. The buckets number 2·Buckets(points)
// when that gives at most points points (smooth data: about two points a
// bucket), else Buckets(points) = max(1, points/6), which always does. For
// fewer than 6 points the single bucket keeps, in this order of priority,
// the minimum, the maximum, then the first and last points. Every returned
// point is a stored point, bit for bit: nothing is averaged or
// interpolated, and the extremes of the span's ok values are always among
// them.
//
// The first/minimum/maximum/last choice per bucket is the M4 scheme of
// Jugel et al., PVLDB 7(10), 2014 (from memory), with quality markers added.
//
// A gap (a stretch with no stored point) is never bridged: see GapLimit for
// how a caller finds gaps in the result. Reduce reads the series through
// Scan, so memory stays bounded by the output and one step of chunks.
// points must be at least 2 and at most MaxReducePoints, and from before to.
//
// Over long spans Reduce reads roll-ups instead of the points, with bucket
// edges on whole minutes or hours; ReduceTiered says how, and returns the
// gap limit that goes with its result.
func (db *DB) Reduce(series string, from, to time.Time, points int) ([]Point, error) {
	r, err := db.ReduceTiered(series, from, to, points)
	return r.Points, err
}

// checkReduce says what is wrong with Reduce's arguments.
func checkReduce(from, to time.Time, points int) error {
	switch {
	case !from.Before(to):
		return fmt.Errorf("reduce: from %s is not before to %s; swap them or widen the span",
			from.Format(time.RFC3339Nano), to.Format(time.RFC3339Nano))
	case points < 2:
		return fmt.Errorf("reduce: %d points: ask for at least 2", points)
	case points > MaxReducePoints:
		return fmt.Errorf("reduce: %d points: at most %d (export the span for every sample)", points, MaxReducePoints)
	}
	return nil
}

// Buckets returns the number of coarse buckets Reduce cuts a span into for
// points; the widest bucket it ever uses is (to−from)/Buckets(points).
func Buckets(points int) int { return max(1, points/perBucket) }

// GapLimit returns the spacing beyond which two consecutive points of pts,
// as returned by Reduce(series, from, to, points), have no stored point
// between them: the larger of the widest bucket (to−from)/Buckets(points)
// and 4 times the 10th percentile of the spacings in pts (the stored
// cadence: even a reduced result holds consecutive stored points at each
// bucket's edges). Both directions hold: two consecutive points of pts
// further apart than GapLimit are consecutive stored points (so the stretch
// between them is a gap, never a reduction), and every stretch longer than
// GapLimit without a stored point lies between two consecutive points of
// pts. (A bucket's points lie within its width; points of different buckets
// that are consecutive in the result are the last of one bucket and the
// first of the next, hence consecutive in the store.) Plot a line break
// there; never join across it.
func GapLimit(pts []Point, from, to time.Time, points int) time.Duration {
	w := to.Sub(from) / time.Duration(Buckets(points))
	if len(pts) < 3 {
		return w
	}
	d := make([]time.Duration, len(pts)-1)
	for i := range d {
		d[i] = pts[i+1].At.Sub(pts[i].At)
	}
	slices.Sort(d)
	return max(w, 4*d[len(d)/10])
}

// A reducer selects Reduce's points from a stream in time order. It keeps
// one summary per non-empty fine bucket (twice as many buckets as
// Buckets(points)); if the fine buckets would give more than points
// points, neighbouring pairs are merged, which gives exactly what the
// coarse buckets would have selected (each summary keeps its bucket's
// first, last, minimum and maximum).
type reducer struct {
	lo, span uint64 // ns; span = hi − lo > 0
	nb       uint64 // fine buckets
	points   int
	raw      []Point // every point while there are at most points of them
	n        int     // points seen
	notOK    int     // of them, points whose quality is not 0
	seq      int     // the next stream number for a roll-up's points (addRollup)
	fine     []bucket
}

// A bucket summarises the points of one bucket; seq numbers the points of
// the stream, to drop repeats and keep stream order.
type bucket struct {
	idx                           uint64
	firstOK, minOK, maxOK, lastOK slot
	firstBad, lastBad             slot
}

type slot struct {
	ok  bool
	seq int
	p   Point
}

func newReducer(lo, hi int64, points int) *reducer {
	return &reducer{lo: uint64(lo), span: uint64(hi) - uint64(lo), nb: 2 * uint64(Buckets(points)), points: points}
}

// bucketOf returns the fine bucket of a time in [lo, hi): floor(d·nb/span),
// exactly, with a 128-bit intermediate.
func (r *reducer) bucketOf(ns int64) uint64 {
	d := uint64(ns) - r.lo
	h, l := bits.Mul64(d, r.nb)
	q, _ := bits.Div64(h, l, r.span)
	return q
}

func (r *reducer) add(p Point) { r.addAt(p, p.At.UnixNano()) }

// addAt adds p as if its time were ns (for the bucket only).
func (r *reducer) addAt(p Point, ns int64) {
	seq := r.n
	r.n++
	if r.n <= r.points+1 {
		r.raw = append(r.raw, p)
	} else {
		r.raw = nil
	}
	b := r.bucketOf(ns)
	if len(r.fine) == 0 || r.fine[len(r.fine)-1].idx != b {
		r.fine = append(r.fine, bucket{idx: b})
	}
	c := &r.fine[len(r.fine)-1]
	s := slot{true, seq, p}
	if p.Quality != 0 {
		r.notOK++
	}
	if !isValid(p) {
		c.firstBad = earlier(c.firstBad, s)
		c.lastBad = later(c.lastBad, s)
		return
	}
	c.firstOK = earlier(c.firstOK, s)
	c.lastOK = later(c.lastOK, s)
	c.minOK = lower(c.minOK, s)
	c.maxOK = higher(c.maxOK, s)
}

// The slot combinators keep the chosen one of two candidates; a candidate
// that is not set always loses.
func earlier(a, b slot) slot { return pick(a, b, b.seq < a.seq) }
func later(a, b slot) slot   { return pick(a, b, b.seq > a.seq) }
func lower(a, b slot) slot {
	return pick(a, b, b.p.Value < a.p.Value || b.p.Value == a.p.Value && b.seq < a.seq)
}
func higher(a, b slot) slot {
	return pick(a, b, b.p.Value > a.p.Value || b.p.Value == a.p.Value && b.seq < a.seq)
}

func pick(a, b slot, bWins bool) slot {
	if !b.ok || a.ok && !bWins {
		return a
	}
	return b
}

// merge summarises two buckets as one.
func merge(a, b bucket) bucket {
	return bucket{idx: a.idx, firstOK: earlier(a.firstOK, b.firstOK), lastOK: later(a.lastOK, b.lastOK),
		minOK: lower(a.minOK, b.minOK), maxOK: higher(a.maxOK, b.maxOK),
		firstBad: earlier(a.firstBad, b.firstBad), lastBad: later(a.lastBad, b.lastBad)}
}

// selection returns a bucket's points, without repeats, in stream order:
// at most limit of them, by priority (minimum, maximum, first ok, first
// not ok, last ok, last not ok) when it must cut.
func (c bucket) selection(limit int) []slot {
	var keep []slot
	for _, s := range []slot{c.minOK, c.maxOK, c.firstOK, c.firstBad, c.lastOK, c.lastBad} {
		if s.ok && !slices.ContainsFunc(keep, func(k slot) bool { return k.seq == s.seq }) {
			keep = append(keep, s)
		}
	}
	keep = keep[:min(len(keep), limit)]
	slices.SortFunc(keep, func(a, b slot) int { return a.seq - b.seq })
	return keep
}

func (r *reducer) result() []Point {
	if r.n <= r.points {
		return r.raw
	}
	total := 0
	for _, c := range r.fine {
		total += len(c.selection(perBucket))
	}
	buckets := r.fine
	if total > r.points { // merge pairs into the coarse buckets
		buckets = nil
		for _, c := range r.fine {
			c.idx >>= 1
			if k := len(buckets) - 1; k >= 0 && buckets[k].idx == c.idx {
				buckets[k] = merge(buckets[k], c)
			} else {
				buckets = append(buckets, c)
			}
		}
	}
	var out []Point
	for _, c := range buckets {
		for _, s := range c.selection(r.points) {
			out = append(out, s.p)
		}
	}
	return out
}
