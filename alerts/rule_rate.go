package alerts

import (
	"fmt"
	"math"
	"time"

	"gonum.org/v1/gonum/stat"

	"holdfast/calib"
)

// Rate is the rate rule: the slope of the gauge's value over the last
// Window (a least-squares line through the samples, so single noisy
// readings do not decide) above Above or below Below, in SI units per
// second (NaN for none). On a temperature gauge it is the bake ramp-rate
// limit. It decides only once the window holds at least half its length
// of samples.
type Rate struct {
	Gauge    string
	Window   time.Duration
	Above    float64
	Below    float64
	Deadband float64    // SI per second
	Unit     calib.Unit // how messages show the numerator

	t, v []float64
	t0   time.Time
}

// Kind returns "rate".
func (r *Rate) Kind() string { return "rate" }

// Gauges returns the gauge the rate is taken of.
func (r *Rate) Gauges() []string { return []string{r.Gauge} }

// Tick decides nothing: a rate depends on samples only.
func (r *Rate) Tick(time.Time, bool) Condition { return unknown() }

// Observe adds s to the window and compares the slope with the limits.
func (r *Rate) Observe(_ string, s calib.Sample, active bool) Condition {
	if s.Quality != calib.QualityOK {
		return unknown()
	}
	if r.t0.IsZero() {
		r.t0 = s.At
	}
	x := s.At.Sub(r.t0).Seconds()
	r.t, r.v = append(r.t, x), append(r.v, s.Value)
	cut := 0
	for cut < len(r.t) && r.t[cut] < x-r.Window.Seconds() {
		cut++
	}
	if cut > 0 {
		r.t, r.v = append(r.t[:0], r.t[cut:]...), append(r.v[:0], r.v[cut:]...)
	}
	if len(r.t) < 3 || r.t[len(r.t)-1]-r.t[0] < r.Window.Seconds()/2 {
		return unknown()
	}
	_, slope := stat.LinearRegression(r.t, r.v, nil, false)
	return r.judge(slope, active)
}

func (r *Rate) judge(slope float64, active bool) Condition {
	db := 0.0
	if active {
		db = r.Deadband
	}
	c := Condition{Known: true, Value: slope, Limit: math.NaN(), Unit: r.Unit.Symbol() + "/min"}
	c.ValueText = r.show(slope)
	switch {
	case !math.IsNaN(r.Above) && slope > r.Above-db:
		c.Active, c.Limit = slope > r.Above || active, r.Above
	case !math.IsNaN(r.Below) && slope < r.Below+db:
		c.Active, c.Limit = slope < r.Below || active, r.Below
	}
	if math.IsNaN(c.Limit) {
		c.Detail = fmt.Sprintf("changing at %s over %s, within limits", c.ValueText, r.Window)
		return c
	}
	c.LimitText = r.show(c.Limit)
	dir := "faster than"
	if c.Limit == r.Below {
		dir = "slower than"
	}
	c.Detail = fmt.Sprintf("changing at %s over %s, %s the %s limit", c.ValueText, r.Window, dir, c.LimitText)
	return c
}

// show formats a rate per minute in the display unit; an affine unit
// (°F) would shift a difference, so temperature rates show in °C then.
func (r *Rate) show(perSecond float64) string {
	u := r.Unit
	if u.Affine() {
		return fmt.Sprintf("%.3g C/min", perSecond*60)
	}
	return fmt.Sprintf("%.3g %s/min", u.FromSI(perSecond*60), u.Symbol())
}
