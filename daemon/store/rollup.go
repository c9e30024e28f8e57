package store

import (
	"math"
	"time"
)

// Roll-up widths: a chart of a night or a week reads these instead of
// every point (the queries that use them are not wired yet).
const (
	RollupMinute = time.Minute
	RollupHour   = time.Hour
)

// A Rollup summarises the points of one series in [Start, Start+Width).
// Min, Max, Sum, First and Last cover the valid points only: Quality 0 and
// a finite Value (NaN and ±Inf carry no level to average).
type Rollup struct {
	Start, End  time.Time // End = Start + the width
	Count       int       // every point in the interval
	Valid       int       // the points the statistics cover
	Min, Max    float64   // of Value; NaN when Valid is 0
	First, Last Point     // the first and last valid points (zero when Valid is 0)
	sum, comp   float64   // the sum of Value and Neumaier's running correction (see add)
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

// ComputeRollups summarises time-sorted points in intervals of width
// aligned on whole multiples of it since 1970 (minutes and hours fall on
// the clock's), one Rollup per interval that holds points, in time order.
// width must be positive.
func ComputeRollups(pts []Point, width time.Duration) []Rollup {
	var out []Rollup
	for _, p := range pts {
		start := bucketStart(p.At, width)
		if len(out) == 0 || !out[len(out)-1].Start.Equal(start) {
			out = append(out, newRollup(start, width))
		}
		out[len(out)-1].add(p)
	}
	return out
}

// bucketStart returns the start of the interval of width holding t,
// rounding towards the past for times before 1970 too.
func bucketStart(t time.Time, width time.Duration) time.Time {
	ns, w := t.UnixNano(), int64(width)
	q := ns / w
	if ns%w < 0 {
		q--
	}
	return time.Unix(0, q*w).UTC()
}

// newRollup returns an empty roll-up for [start, start+width).
func newRollup(start time.Time, width time.Duration) Rollup {
	return Rollup{Start: start, End: start.Add(width), Min: math.NaN(), Max: math.NaN()}
}

// add counts one point. The sum uses Neumaier's compensated summation (an
// improved Kahan sum; A. Neumaier, "Rundungsfehleranalyse einiger
// Verfahren zur Summation endlicher Summen", ZAMM 54, 1974), so an hour of
// 10 Hz readings keeps its mean to the last digit.
func (r *Rollup) add(p Point) {
	r.Count++
	v := p.Value
	if p.Quality != 0 || math.IsNaN(v) || math.IsInf(v, 0) {
		return
	}
	if r.Valid == 0 {
		r.Min, r.Max, r.First = v, v, p
	}
	r.Valid++
	r.Min, r.Max, r.Last = min(r.Min, v), max(r.Max, v), p
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
func MergeRollups(a, b Rollup) Rollup {
	out := a
	out.End = b.End
	out.Count += b.Count
	if b.Valid == 0 {
		return out
	}
	if a.Valid == 0 {
		out.Min, out.Max, out.First = b.Min, b.Max, b.First
	} else {
		out.Min, out.Max = min(a.Min, b.Min), max(a.Max, b.Max)
	}
	out.Valid += b.Valid
	out.Last = b.Last
	out.addSum(b.sum)
	out.comp += b.comp
	return out
}
