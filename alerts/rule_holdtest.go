package alerts

import (
	"fmt"
	"time"

	"holdfast/calib"
)

// HoldTestGauge is the pseudo gauge through which a hold test's result
// reaches the engine: a sample whose value is the leak rate (Pa·m³/s),
// with QualityOK when the test was conclusive and QualitySensorFault when
// it was not.
func HoldTestGauge(gauge string) string { return "holdfast:hold-test:" + gauge }

// HoldTest is the hold-test rule: the last hold test on the gauge found a
// leak rate above Allowed, the chamber's allowed leak rate.
type HoldTest struct {
	Gauge   string
	Allowed float64 // Pa·m³/s
	Unit    calib.Unit
}

// Kind returns "hold-test".
func (r *HoldTest) Kind() string { return "hold-test" }

// Gauges returns the hold-test pseudo gauge of the watched gauge.
func (r *HoldTest) Gauges() []string { return []string{HoldTestGauge(r.Gauge)} }

// Tick decides nothing: results arrive as samples.
func (r *HoldTest) Tick(time.Time, bool) Condition { return unknown() }

// Observe judges one hold-test result.
func (r *HoldTest) Observe(_ string, s calib.Sample, _ bool) Condition {
	if s.Quality != calib.QualityOK {
		return unknown()
	}
	c := Condition{Known: true, Active: s.Value > r.Allowed, Value: s.Value, Limit: r.Allowed, Unit: r.Unit.Symbol(),
		ValueText: calib.Format(s.Value, r.Unit), LimitText: calib.Format(r.Allowed, r.Unit)}
	verdict := "within"
	if c.Active {
		verdict = "above"
	}
	c.Detail = fmt.Sprintf("hold test found a leak rate of %s, %s the allowed %s", c.ValueText, verdict, c.LimitText)
	return c
}
