package store

import (
	"math"
	"time"
)

// Roll-up widths: the store keeps one roll-up per minute and one per hour
// of each series (rollupstore.go), and long reduced queries read them
// instead of every point (reduce.go).
const (
	RollupMinute = time.Minute
	RollupHour   = time.Hour
)

// A Rollup summarises the points of one series in [Start, Start+Width).
//
// Which points enter the statistics: only the valid ones, quality 0 with a
// finite Value. A point of any other quality (over-range, under-range,
// sensor fault, off, extrapolated) has no measured level, and a NaN or ±Inf
// carries none to average, so Min, Max, Sum, First and Last never see them
// and one NaN cannot poison an hour's mean. They are still counted (Count,
// NotOK) and the first and last of them are kept as markers (FirstMark,
// LastMark), so a reduced plot built from roll-ups shows an over-range or a
// fault stretch just as one built from the points does.
type Rollup struct {
	Start, End          time.Time // End = Start + the width
	Count               int       // every point in the interval
	Valid               int       // the points the statistics cover (quality 0, finite value)
	NotOK               int       // the points whose quality is not 0
	Min, Max            float64   // of Value; NaN when Valid is 0
	First, Last         Point     // the first and last valid points (zero when Valid is 0)
	MinPoint, MaxPoint  Point     // valid points holding Min and Max, the earliest on ties
	FirstMark, LastMark Point     // the first and last points that are not valid (zero when Count == Valid)
	sum, comp           float64   // the sum of Value and Neumaier's running correction (see add)
}

// Sum returns the sum of the valid values.
func (r Rollup) Sum() float64 { return r.sum + r.comp }

// Mean returns the mean of the valid values, or NaN when there are none.
func (r Rollup) Mean() float64 {
	if r.Valid == 0 {
		return math.NaN()
	}
	return r.Sum() / float64(r.Valid)
}

// Marks returns how many points are not valid: the ones FirstMark and
// LastMark delimit.
func (r Rollup) Marks() int { return r.Count - r.Valid }

// ComputeRollups summarises time-sorted points in intervals of width
// aligned on whole multiples of it since 1970 (minutes and hours fall on
// the clock's), one Rollup per interval that holds points, in time order.
// width must be positive.
func ComputeRollups(pts []Point, width time.Duration) []Rollup {
	var out []Rollup
	end := int64(-1 << 63) // of the last interval, exclusive
	for _, p := range pts {
		if ns := p.At.UnixNano(); len(out) == 0 || ns >= end {
			start := floorNano(ns, int64(width))
			out = append(out, newRollup(time.Unix(0, start).UTC(), width))
			end = start + int64(width)
			if end < start { // the last interval before 2262
				end = 1<<63 - 1
			}
		}
		out[len(out)-1].add(p)
	}
	return out
}

// bucketStart returns the start of the interval of width holding t,
// rounding towards the past for times before 1970 too.
func bucketStart(t time.Time, width time.Duration) time.Time {
	return time.Unix(0, floorNano(t.UnixNano(), int64(width))).UTC()
}

// floorNano rounds ns down to a multiple of w, towards the past,
// saturating at the earliest time.
func floorNano(ns, w int64) int64 {
	r := ns % w
	switch {
	case r >= 0:
		return ns - r
	case ns-r < -1<<63+w:
		return -1 << 63
	}
	return ns - r - w
}

// newRollup returns an empty roll-up for [start, start+width).
func newRollup(start time.Time, width time.Duration) Rollup {
	return Rollup{Start: start, End: start.Add(width), Min: math.NaN(), Max: math.NaN()}
}

// isValid reports whether p enters a roll-up's statistics.
func isValid(p Point) bool {
	return p.Quality == 0 && !math.IsNaN(p.Value) && !math.IsInf(p.Value, 0)
}

// add counts one point, which comes after (or at the time of) every point
// already counted. The sum uses Neumaier's compensated summation (an
// improved Kahan sum; A. Neumaier, "Rundungsfehleranalyse einiger
// Verfahren zur Summation endlicher Summen", ZAMM 54, 1974), so an hour of
// 10 Hz readings keeps its mean to the last digit.
func (r *Rollup) add(p Point) {
	r.Count++
	if p.Quality != 0 {
		r.NotOK++
	}
	if !isValid(p) {
		if r.Count-r.Valid == 1 {
			r.FirstMark = p
		}
		r.LastMark = p
		return
	}
	v := p.Value
	if r.Valid == 0 {
		r.Min, r.Max, r.First, r.MinPoint, r.MaxPoint = v, v, p, p, p
	}
	r.Valid++
	if v < r.Min {
		r.Min, r.MinPoint = v, p
	}
	if v > r.Max {
		r.Max, r.MaxPoint = v, p
	}
	r.Last = p
	r.addSum(v)
}

// addSum adds v to the compensated sum.
func (r *Rollup) addSum(v float64) {
	t := r.sum + v
	if math.Abs(r.sum) >= math.Abs(v) {
		r.comp += (r.sum - t) + v
	} else {
		r.comp += (v - t) + r.sum
	}
	r.sum = t
}

// MergeRollups returns the roll-up of two consecutive intervals' points, a
// before b (minutes into an hour): counts and sums add, extremes combine,
// First comes from a when it has one and Last from b. The result spans
// from a.Start to b.End.
func MergeRollups(a, b Rollup) Rollup { return combine(a, b) }

// combine returns the roll-up of the points of a and b together, in any
// time order (a late point's roll-up merged into a stored one): b's points
// count as appended after a's, so on equal times a's point is the earlier
// one, as the store orders equal times. The result spans both.
func combine(a, b Rollup) Rollup {
	out := a
	if b.Start.Before(out.Start) || a.Count == 0 {
		out.Start = b.Start
	}
	if b.End.After(out.End) || a.Count == 0 {
		out.End = b.End
	}
	out.Count += b.Count
	out.NotOK += b.NotOK
	if b.Marks() > 0 {
		if a.Marks() == 0 || b.FirstMark.At.Before(a.FirstMark.At) {
			out.FirstMark = b.FirstMark
		}
		if a.Marks() == 0 || !b.LastMark.At.Before(a.LastMark.At) {
			out.LastMark = b.LastMark
		}
	}
	if b.Valid == 0 {
		return out
	}
	if a.Valid == 0 {
		out.Min, out.Max, out.First, out.Last, out.MinPoint, out.MaxPoint = b.Min, b.Max, b.First, b.Last, b.MinPoint, b.MaxPoint
	} else {
		if b.First.At.Before(a.First.At) {
			out.First = b.First
		}
		if !b.Last.At.Before(a.Last.At) {
			out.Last = b.Last
		}
		if b.Min < a.Min || b.Min == a.Min && b.MinPoint.At.Before(a.MinPoint.At) {
			out.Min, out.MinPoint = b.Min, b.MinPoint
		}
		if b.Max > a.Max || b.Max == a.Max && b.MaxPoint.At.Before(a.MaxPoint.At) {
			out.Max, out.MaxPoint = b.Max, b.MaxPoint
		}
	}
	out.Valid += b.Valid
	out.addSum(b.sum)
	out.comp += b.comp
	return out
}
