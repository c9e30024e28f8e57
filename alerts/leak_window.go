package alerts

import (
	"fmt"
	"math"
)

// TimeTo returns the time, in seconds from the start of the record, at which
// the fitted curve reaches pressure p (Pa), assuming the curve goes on as
// fitted. A target at or below the starting pressure gives 0; one the curve
// never reaches (it levels off or falls first) gives ErrUnreachable.
func (f RiseFit) TimeTo(p float64) (float64, error) {
	if !isFinite(p) {
		return 0, fmt.Errorf("target pressure %g Pa is not a finite number", p)
	}
	if p <= f.P0 {
		return 0, nil
	}
	var hi float64
	switch {
	case f.Slope > 0:
		hi = (p - f.P0) / f.Slope // p(t) ≥ P0 + Slope·t, so p(hi) ≥ p
	case f.Tau > 0 && f.Curve > 0 && f.Slope == 0:
		if p >= f.P0+f.Curve {
			return 0, ErrUnreachable
		}
		return -f.Tau * math.Log1p(-(p-f.P0)/f.Curve), nil
	case f.Tau > 0 && f.Curve > 0 && f.Slope < 0:
		hi = f.Tau * math.Log(-f.Curve/(f.Slope*f.Tau)) // the peak, where Rate = 0
		if hi <= 0 || f.Pressure(hi) < p {
			return 0, ErrUnreachable
		}
	default:
		return 0, ErrUnreachable
	}
	lo := 0.0
	for range 200 {
		mid := lo + (hi-lo)/2
		if mid <= lo || mid >= hi {
			break
		}
		if f.Pressure(mid) < p {
			lo = mid
		} else {
			hi = mid
		}
	}
	return hi, nil
}

// A Rise holds the samples of a sliding window for the rise watch: Add the
// samples as they come and Analyze the window when wanted. The zero value
// keeps everything; set Window to keep only the last Window seconds.
type Rise struct {
	Window float64 // seconds kept, measured back from the newest sample; 0 keeps all
	t, p   []float64
	head   int
	newest float64
}

// Add appends one sample (t in seconds, p in Pa) and drops samples that fell
// out of the window. Samples may arrive out of order; one already older than
// the window is ignored.
func (r *Rise) Add(t, p float64) {
	if r.Len() == 0 || t > r.newest {
		r.newest = t
	}
	if r.Window > 0 && t < r.newest-r.Window {
		return
	}
	r.t, r.p = append(r.t, t), append(r.p, p)
	if r.Window <= 0 {
		return
	}
	for r.head < len(r.t) && r.t[r.head] < r.newest-r.Window {
		r.head++
	}
	if r.head > len(r.t)/2 {
		n := copy(r.t, r.t[r.head:])
		copy(r.p, r.p[r.head:])
		r.t, r.p, r.head = r.t[:n], r.p[:n], 0
	}
}

// Len returns the number of samples in the window.
func (r *Rise) Len() int { return len(r.t) - r.head }

// Reset empties the window, as when the chamber is pumped again.
func (r *Rise) Reset() { r.t, r.p, r.head = r.t[:0], r.p[:0], 0 }

// Analyze runs AnalyzeRise on the samples in the window.
func (r *Rise) Analyze(volume float64, opt RiseOptions) (RiseResult, error) {
	return AnalyzeRise(r.t[r.head:], r.p[r.head:], volume, opt)
}

// IntervalRates returns dp/dt between successive readings, the hand method
// of a rate-of-rise test: a leak keeps them constant, outgassing makes them
// fall. Times must strictly increase.
func IntervalRates(t, p []float64) ([]float64, error) {
	if len(t) != len(p) {
		return nil, fmt.Errorf("%d times but %d pressures: give one pressure per time", len(t), len(p))
	}
	if len(t) < 2 {
		return nil, fmt.Errorf("%d readings: interval rates need at least 2", len(t))
	}
	r := make([]float64, len(t)-1)
	for i := range r {
		dt := t[i+1] - t[i]
		if !(dt > 0) {
			return nil, fmt.Errorf("reading %d at %g s does not follow reading %d at %g s: sort the times", i+1, t[i+1], i, t[i])
		}
		r[i] = (p[i+1] - p[i]) / dt
	}
	return r, nil
}

// TwoReadingLeak returns Q = V·(p2 − p1)/(t2 − t1) (Pa·m³/s from m³, Pa and
// s), the pressure-rise relation of the pressure-change leak test (EN 13184)
// for two readings of an isolated volume.
func TwoReadingLeak(volume, t1, p1, t2, p2 float64) (float64, error) {
	if !(volume > 0) || math.IsInf(volume, 0) {
		return 0, fmt.Errorf("volume %g m³ is not a positive finite volume", volume)
	}
	if !(t2 > t1) || math.IsInf(t2-t1, 0) {
		return 0, fmt.Errorf("second reading at %g s must come after the first at %g s", t2, t1)
	}
	return volume * (p2 - p1) / (t2 - t1), nil
}
