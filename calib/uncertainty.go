package calib

import (
	"fmt"
	"math"
)

// Uncertainty is a calibration's uncertainty in the simple form of the GUM
// (JCGM 100:2008): per pressure range, the relative standard uncertainties
// of the reference, the fit scatter and the gauge's resolution are combined
// in quadrature, u_c = sqrt(Σ u_i²), and expanded with coverage factor K
// (2, about 95 % for a normal distribution): U = K·u_c.
type Uncertainty struct {
	K float64 `json:"k"`
	// ReferenceExpanded is the reference's relative expanded uncertainty (k = 2) as stated.
	ReferenceExpanded float64 `json:"reference_expanded_relative"`
	// Resolution is the raw signal's smallest step (raw units); 0 if not given.
	Resolution float64            `json:"resolution_raw"`
	Ranges     []UncertaintyRange `json:"ranges"`
}

// An UncertaintyRange holds the budget for one pressure range (Pa). The
// component and combined fields are relative standard uncertainties.
type UncertaintyRange struct {
	From       float64 `json:"from_pa"`
	To         float64 `json:"to_pa"`
	Reference  float64 `json:"reference_relative"`
	Fit        float64 `json:"fit_relative"`
	Resolution float64 `json:"resolution_relative"`
	Combined   float64 `json:"combined_relative"`
	Expanded   float64 `json:"expanded_relative"`
}

// CombineStandard returns sqrt(Σ u_i²), the combined standard uncertainty of
// uncorrelated components (GUM 5.1.2 with unit sensitivity coefficients).
func CombineStandard(u ...float64) float64 {
	s := 0.0
	for _, v := range u {
		s += v * v
	}
	return math.Sqrt(s)
}

// RectangularStandard returns the standard uncertainty a/√3 of a quantity
// known only to lie within ±a (GUM 4.3.7); a resolution step δ gives a = δ/2.
func RectangularStandard(halfWidth float64) float64 { return halfWidth / math.Sqrt(3) }

// At returns the relative expanded uncertainty of a pressure p (Pa), and
// false when p lies outside every range.
func (u Uncertainty) At(p float64) (float64, bool) {
	for _, r := range u.Ranges {
		if p >= r.From && p <= r.To {
			return r.Expanded, true
		}
	}
	return 0, false
}

// decadeBands splits [lo, hi] at whole decades, merging slivers under 0.1 decade.
func decadeBands(lo, hi float64) [][2]float64 {
	edges := []float64{lo}
	for k := math.Ceil(math.Log10(lo)); k < math.Log10(hi); k++ {
		e := math.Pow(10, k)
		if math.Log10(e/edges[len(edges)-1]) >= 0.1 && math.Log10(hi/e) >= 0.1 {
			edges = append(edges, e)
		}
	}
	edges = append(edges, hi)
	bands := make([][2]float64, len(edges)-1)
	for i := range bands {
		bands[i] = [2]float64{edges[i], edges[i+1]}
	}
	return bands
}

// uncertainty builds the budget for a fitted calibration with a valid range.
func (c *Calibration) uncertainty(refExpanded, resolution float64) (Uncertainty, error) {
	u := Uncertainty{K: 2, ReferenceExpanded: refExpanded, Resolution: resolution}
	v := c.Valid
	if !(v.PressureMin > 0) || !(v.PressureMax > v.PressureMin) {
		return u, fmt.Errorf("the fitted curve gives %g…%g Pa over the points' raw range; it must be positive and rising or falling", v.PressureMin, v.PressureMax)
	}
	sens := c.sensitivities()
	for _, b := range decadeBands(v.PressureMin, v.PressureMax) {
		r := UncertaintyRange{From: b[0], To: b[1], Reference: refExpanded / 2, Fit: c.Fit.Scatter}
		for _, s := range sens {
			if s.p >= b[0]*(1-1e-12) && s.p <= b[1]*(1+1e-12) {
				r.Resolution = max(r.Resolution, RectangularStandard(resolution/2)*s.dlnp)
			}
		}
		r.Combined = CombineStandard(r.Reference, r.Fit, r.Resolution)
		r.Expanded = u.K * r.Combined
		u.Ranges = append(u.Ranges, r)
	}
	return u, nil
}

type sensitivity struct{ p, dlnp float64 }

// sensitivities samples |d ln p / d raw| across the valid raw range.
func (c *Calibration) sensitivities() []sensitivity {
	const steps = 400
	lo, hi := c.Valid.RawMin, c.Valid.RawMax
	h := (hi - lo) / steps / 2
	var out []sensitivity
	for i := 0; i <= steps; i++ {
		x := lo + (hi-lo)*float64(i)/steps
		a, b := max(lo, x-h), min(hi, x+h)
		pa, ok1 := c.curve.pressure(a)
		pb, ok2 := c.curve.pressure(b)
		p, ok3 := c.curve.pressure(x)
		if ok1 && ok2 && ok3 && pa > 0 && pb > 0 && p > 0 && b > a {
			out = append(out, sensitivity{p, math.Abs(math.Log(pb/pa) / (b - a))})
		}
	}
	return out
}
