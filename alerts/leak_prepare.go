package alerts

import (
	"cmp"
	"fmt"
	"math"
	"slices"
)

// record is a rise record made ready for fitting: sorted, one pressure per
// time, grouped when long, a falling start trimmed.
type record struct {
	t, p        []float64 // seconds since start; Pa
	start       float64   // input-clock time of t = 0
	merged      int
	trimmed     int
	trimmedSpan float64
	groupSize   int
	q           []float64 // reading step at each point, Pa (0: unknown)
	diffNoise   float64   // noise estimated from second differences, Pa
}

// checkRiseInput rejects input that no analysis can use.
func checkRiseInput(t, p []float64, volume float64) error {
	if len(t) != len(p) {
		return fmt.Errorf("rise record has %d times but %d pressures: give one pressure per time", len(t), len(p))
	}
	if !(volume > 0) || math.IsInf(volume, 0) {
		return fmt.Errorf("volume %g m³ is not a positive finite volume: give the isolated chamber's volume", volume)
	}
	for i := range t {
		if !isFinite(t[i]) || !isFinite(p[i]) {
			return fmt.Errorf("rise sample %d (time %g s, pressure %g Pa) is not a finite number: drop or fix it", i, t[i], p[i])
		}
	}
	if len(t) > 0 {
		tLo, tHi := slices.Min(t), slices.Max(t)
		pLo, pHi := slices.Min(p), slices.Max(p)
		if !isFinite(tHi-tLo) || !isFinite(pHi-pLo) {
			return fmt.Errorf("rise record spans %g s to %g s and %g Pa to %g Pa: too far apart to compute with; "+
				"check the columns' units", tLo, tHi, pLo, pHi)
		}
	}
	return nil
}

func isFinite(v float64) bool { return !math.IsNaN(v) && !math.IsInf(v, 0) }

// prepareRecord sorts, merges, groups and trims the samples. It never
// modifies t or p.
func prepareRecord(t, p []float64, opt RiseOptions) record {
	var rec record
	step := opt.Step
	if step == nil {
		step = detectStep(p)
	}
	ts, ps, merged := sortMerge(t, p)
	rec.merged = merged
	ts, ps, rec.groupSize = group(ts, ps, opt.MaxPoints)
	rec.diffNoise = diffNoise(ps)
	if !opt.KeepStart && len(ps) >= opt.MinPoints {
		k := fallingStart(ps, rec.diffNoise, stepAt(step, ps[0]))
		if k > 0 {
			rec.trimmed, rec.trimmedSpan = k, ts[k]-ts[0]
			ts, ps = ts[k:], ps[k:]
		}
	}
	if len(ts) > 0 {
		rec.start = ts[0]
	}
	rec.t = make([]float64, len(ts))
	for i, v := range ts {
		rec.t[i] = v - rec.start
	}
	rec.p = ps
	rec.q = make([]float64, len(ps))
	for i, v := range ps {
		rec.q[i] = stepAt(step, v)
	}
	return rec
}

func stepAt(step ReadingStep, p float64) float64 {
	if step == nil {
		return 0
	}
	if q := step(p); q > 0 && isFinite(q) {
		return q
	}
	return 0
}

// sortMerge returns the samples in time order with samples that share a
// time replaced by their mean pressure, and how many were folded in.
func sortMerge(t, p []float64) (ts, ps []float64, merged int) {
	idx := make([]int, len(t))
	for i := range idx {
		idx[i] = i
	}
	slices.SortStableFunc(idx, func(i, j int) int { return cmp.Compare(t[i], t[j]) })
	ts = make([]float64, 0, len(t))
	ps = make([]float64, 0, len(t))
	for k := 0; k < len(idx); {
		j, sum := k, 0.0
		for j < len(idx) && t[idx[j]] == t[idx[k]] {
			sum += p[idx[j]]
			j++
		}
		ts = append(ts, t[idx[k]])
		ps = append(ps, sum/float64(j-k))
		merged += j - k - 1
		k = j
	}
	return ts, ps, merged
}

// group cuts a record longer than maxPoints into consecutive groups of
// equal size, each replaced by its mean time and median pressure (the
// median keeps the fit robust to outliers).
func group(t, p []float64, maxPoints int) (gt, gp []float64, size int) {
	if len(t) <= maxPoints {
		return t, p, 1
	}
	size = (len(t) + maxPoints - 1) / maxPoints
	n := (len(t) + size - 1) / size
	gt, gp = make([]float64, 0, n), make([]float64, 0, n)
	buf := make([]float64, 0, size)
	for i := 0; i < len(t); i += size {
		j := min(i+size, len(t))
		sum := 0.0
		for _, v := range t[i:j] {
			sum += v
		}
		gt = append(gt, sum/float64(j-i))
		gp = append(gp, median(append(buf[:0], p[i:j]...)))
	}
	return gt, gp, size
}

// fallingStart returns how many leading points to drop because the record
// starts while the pressure still falls (pumping not yet valved off), or 0.
// It smooths with a running median, finds the lowest smoothed pressure in
// the first half and trims up to it when the fall from the first point
// exceeds three noise units and a reading step.
func fallingStart(p []float64, noise, step float64) int {
	n := len(p)
	w := min(max(5, n/20), 51) | 1
	sm := runningMedian(p, w)
	k := 0
	for i := 1; i <= n/2; i++ {
		if sm[i] < sm[k] {
			k = i
		}
	}
	if k == 0 || sm[0]-sm[k] <= 3*noise+step {
		return 0
	}
	// The wide window blurs the corner where the fall stops; find it again
	// with a narrow one near k.
	lo, hi := max(0, k-w), min(n, k+w+1)
	fine := runningMedian(p[lo:hi], 5)
	best := k - lo
	for i := range fine {
		if fine[i] < fine[best] {
			best = i
		}
	}
	return lo + best
}

// runningMedian returns the median of each window of w points centred on
// each point, the window shrinking at the ends.
func runningMedian(p []float64, w int) []float64 {
	h := w / 2
	out := make([]float64, len(p))
	buf := make([]float64, 0, w)
	for i := range p {
		lo, hi := max(0, i-h), min(len(p), i+h+1)
		out[i] = median(append(buf[:0], p[lo:hi]...))
	}
	return out
}

// diffNoise estimates the noise of p from its second differences, which a
// slowly bending curve hardly touches: for independent noise of standard
// deviation σ they have standard deviation √6·σ, estimated robustly as
// 1.4826 × their median absolute deviation (the normal-consistency factor;
// Rousseeuw & Croux, JASA 88 (1993) 1273, from memory).
func diffNoise(p []float64) float64 {
	if len(p) < 3 {
		return 0
	}
	d := make([]float64, len(p)-2)
	for i := range d {
		d[i] = p[i+2] - 2*p[i+1] + p[i]
	}
	return madScale(d) / math.Sqrt(6)
}

// madScale returns 1.4826 × the median absolute deviation of v; v is reordered.
func madScale(v []float64) float64 {
	m := median(v)
	for i := range v {
		v[i] = math.Abs(v[i] - m)
	}
	return 1.4826 * median(v)
}

// median returns the median of v, reordering v.
func median(v []float64) float64 {
	if len(v) == 0 {
		return 0
	}
	slices.Sort(v)
	n := len(v)
	if n%2 == 1 {
		return v[n/2]
	}
	return (v[n/2-1] + v[n/2]) / 2
}
