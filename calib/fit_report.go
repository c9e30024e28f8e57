package calib

import (
	"fmt"
	"math"
)

// finish fills in what every model shares: residuals, scatter, valid range
// and the uncertainty budget.
func (c *Calibration) finish(opt FitOptions) error {
	// Evaluate from the stored parameters, so a calibration read back from
	// JSON gives the very same numbers as the one just fitted.
	cv, err := buildCurve(c.Model, c.Parameters, c.Knots)
	if err != nil {
		return err
	}
	c.curve = cv
	f := &c.Fit
	n, m := len(c.Points), f.Parameters
	f.Points = n
	f.Residuals = make([]float64, n)
	sum := 0.0
	for i, pt := range c.Points {
		p, ok := c.curve.pressure(pt.Raw)
		r := p/pt.Reference - 1
		if !ok {
			r = -1
			f.Notes = append(f.Notes, fmt.Sprintf("point %s: raw %g is outside what the fitted curve can reach (residual shown as -1)", pointName(c.Points, i), pt.Raw))
		}
		f.Residuals[i] = r
		sum += r * r
		f.Max = max(f.Max, math.Abs(r))
	}
	f.RMS = math.Sqrt(sum / float64(n))
	if c.Model != ModelPCHIP {
		if n > m {
			f.Scatter = math.Sqrt(sum / float64(n-m))
		} else {
			f.Notes = append(f.Notes, fmt.Sprintf("%d points for %d parameters: the curve passes through every point and its scatter cannot be estimated; add points", n, m))
		}
	}
	if err := c.setValid(); err != nil {
		return err
	}
	u, err := c.uncertainty(opt.ReferenceUncertainty, opt.Resolution)
	if err != nil {
		return err
	}
	c.Uncertainty = u
	return nil
}

// setValid sets the valid range to the points' raw span and the curve's
// pressures at its ends.
func (c *Calibration) setValid() error {
	lo, hi := rawSpan(c.Points)
	plo, ok1 := c.curve.pressure(lo)
	phi, ok2 := c.curve.pressure(hi)
	if !ok1 || !ok2 {
		plo, phi = math.Inf(1), 0
		for _, p := range c.Points {
			plo, phi = min(plo, p.Reference), max(phi, p.Reference)
		}
	}
	if plo > phi {
		plo, phi = phi, plo
	}
	if math.IsNaN(plo) || math.IsInf(phi, 0) {
		return fmt.Errorf("the fitted curve gives no finite pressure at raw %g…%g", lo, hi)
	}
	c.Valid = Range{RawMin: lo, RawMax: hi, PressureMin: plo, PressureMax: phi}
	return nil
}
