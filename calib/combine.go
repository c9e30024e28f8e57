package calib

import (
	"errors"
	"fmt"
	"math"
	"time"
)

// A Span is the pressure range (Pa) over which one member of a combined
// gauge is trusted.
type Span struct{ Low, High float64 }

// Validate reports a span that cannot be used.
func (s Span) Validate() error {
	if !(s.Low > 0) || !(s.High > s.Low) || math.IsInf(s.High, 0) {
		return fmt.Errorf("range %g…%g Pa: need 0 < low < high", s.Low, s.High)
	}
	return nil
}

// BlendWeights returns the weight of each member of a combined gauge given
// its sample. A member counts only when its sample is QualityOK with a
// positive value inside its span. Its raw weight is d², where d is how far
// (in decades) its own reading lies inside its span from the nearer edge;
// the weights are then scaled to sum to one. Where one member's span
// overlaps the next, the weight therefore moves smoothly (zero slope at both
// ends of the overlap) from one gauge to the other across the overlap in log
// pressure, and outside an overlap the one member in range has weight 1.
// All weights are zero when no member counts.
func BlendWeights(spans []Span, samples []Sample) []float64 {
	return weights(spans, samples, QualityOK)
}

func weights(spans []Span, samples []Sample, q Quality) []float64 {
	w := make([]float64, len(spans))
	total := 0.0
	for i, s := range spans {
		if i >= len(samples) || samples[i].Quality != q || !(samples[i].Value > 0) || s.Validate() != nil {
			continue
		}
		lp := math.Log10(samples[i].Value)
		d := min(lp-math.Log10(s.Low), math.Log10(s.High)-lp)
		if d > 0 {
			w[i] = d * d
			total += w[i]
		}
	}
	for i := range w {
		if total > 0 {
			w[i] /= total
		}
	}
	return w
}

// ErrNoMember means no member of a combined gauge had a usable reading.
var ErrNoMember = errors.New("no member gauge has a valid reading")

// Blend merges the members' samples into one: the weighted mean of their
// log pressures (weights from BlendWeights), QualityOK. An extrapolated
// member (read outside its calibration's range) counts only where no ok
// member is in range; the blend of such members, with the same weights, is
// QualityExtrapolated. When no member is in its span but some have a value,
// it returns the reading of the member nearest its own span: with an error
// wrapping ErrAboveRange (ErrBelowRange) when that reading lies above
// (below) every member's span, else QualityExtrapolated, because a pressure
// inside the combined range is no over- or under-range even when the member
// trusted there cannot read it. When no member has a value it returns
// ErrNoMember. The result's Raw is 0: a combined gauge has no raw signal
// of its own.
func Blend(spans []Span, samples []Sample) (Sample, error) {
	if len(spans) != len(samples) {
		return Sample{}, fmt.Errorf("blend: %d ranges for %d samples", len(spans), len(samples))
	}
	out := Sample{}
	for _, s := range samples {
		out.At = later(out.At, s)
	}
	for _, q := range []Quality{QualityOK, QualityExtrapolated} {
		w := weights(spans, samples, q)
		if !anyPositive(w) {
			continue
		}
		lp := 0.0
		for i, wi := range w {
			if wi > 0 {
				lp += wi * math.Log10(samples[i].Value)
			}
		}
		out.Value, out.Quality = math.Pow(10, lp), q
		return out, nil
	}
	return nearestOutside(out, spans, samples)
}

// later returns the later of t and the sample's time: a blend is as new as its newest member.
func later(t time.Time, s Sample) time.Time {
	if s.At.After(t) {
		return s.At
	}
	return t
}

func anyPositive(w []float64) bool {
	for _, v := range w {
		if v > 0 {
			return true
		}
	}
	return false
}

// nearestOutside picks, among members with a value out of range, the one
// closest (in decades) to its span.
func nearestOutside(out Sample, spans []Span, samples []Sample) (Sample, error) {
	best, dist := -1, math.Inf(1)
	for i, s := range samples {
		if !s.Quality.HasValue() || !(s.Value > 0) || spans[i].Validate() != nil {
			continue
		}
		lp := math.Log10(s.Value)
		d := max(math.Log10(spans[i].Low)-lp, lp-math.Log10(spans[i].High))
		if d < dist {
			best, dist = i, d
		}
	}
	if best < 0 {
		out.Quality = QualitySensorFault
		return out, ErrNoMember
	}
	out.Value = samples[best].Value
	low, high := math.Inf(1), 0.0
	for _, sp := range spans {
		if sp.Validate() == nil {
			low, high = min(low, sp.Low), max(high, sp.High)
		}
	}
	switch {
	case out.Value < low:
		out.Quality = QualityUnderRange
		return out, fmt.Errorf("member %d reads %g Pa, below every member's range: %w", best+1, out.Value, ErrBelowRange)
	case out.Value > high:
		out.Quality = QualityOverRange
		return out, fmt.Errorf("member %d reads %g Pa, above every member's range: %w", best+1, out.Value, ErrAboveRange)
	}
	out.Quality = QualityExtrapolated
	return out, nil
}
