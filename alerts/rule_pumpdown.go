package alerts

import (
	"fmt"
	"math"
	"time"

	"holdfast/calib"
)

// PumpDeadline is the pump-down deadline rule: once the gauge falls below
// Start (pumping has begun), it must reach Target within Within. The clock
// starts again whenever the gauge reads above Start (the chamber was
// vented). When Guide has a volume and a speed, the message offers the
// expected time t = (V/S)·ln(p0/p) from Start to Target as guidance.
type PumpDeadline struct {
	Gauge  string
	Start  float64 // Pa
	Target float64 // Pa
	Within time.Duration
	Guide  PumpDown
	Unit   calib.Unit

	started time.Time
	reached bool
	last    calib.Sample
}

// Kind returns "pump-down".
func (r *PumpDeadline) Kind() string { return "pump-down" }

// Gauges returns the gauge watched.
func (r *PumpDeadline) Gauges() []string { return []string{r.Gauge} }

// Observe follows the pump-down on the gauge's samples.
func (r *PumpDeadline) Observe(_ string, s calib.Sample, _ bool) Condition {
	p := s.Value
	switch s.Quality {
	case calib.QualityOverRange:
		p = math.Inf(1)
	case calib.QualityUnderRange:
		p = 0
	case calib.QualityOK, calib.QualityExtrapolated:
	default:
		return unknown()
	}
	r.last = s
	switch {
	case p > r.Start:
		r.started, r.reached = time.Time{}, false
	case r.started.IsZero() && !r.reached:
		r.started = s.At
	}
	if p <= r.Target && !r.started.IsZero() {
		r.reached, r.started = true, time.Time{}
	}
	return r.judge(s.At)
}

// Tick checks the deadline on the clock, so a gauge stuck at one value
// still raises the alarm.
func (r *PumpDeadline) Tick(now time.Time, _ bool) Condition {
	if r.started.IsZero() {
		return unknown()
	}
	return r.judge(now)
}

func (r *PumpDeadline) judge(now time.Time) Condition {
	c := Condition{Known: true, Value: r.last.Value, Limit: r.Target, Unit: r.Unit.Symbol(),
		ValueText: r.last.Quality.String(), LimitText: calib.Format(r.Target, r.Unit)}
	if r.last.Quality == calib.QualityOK {
		c.ValueText = calib.Format(r.last.Value, r.Unit)
	}
	if r.started.IsZero() {
		c.Detail = "reached " + c.LimitText
		if !r.reached {
			c.Detail = "is not pumping (above " + calib.Format(r.Start, r.Unit) + ")"
		}
		return c
	}
	took := now.Sub(r.started)
	c.Active = took > r.Within
	c.Detail = fmt.Sprintf("has not reached %s %s after pumping began (reads %s; deadline %s)",
		c.LimitText, took.Round(time.Second), c.ValueText, r.Within) + r.guidance()
	return c
}

func (r *PumpDeadline) guidance() string {
	if r.Guide.Volume <= 0 || r.Guide.Speed <= 0 {
		return ""
	}
	t, err := r.Guide.Time(r.Start, r.Target)
	if err != nil {
		return ""
	}
	return fmt.Sprintf("; at an effective %.3g L/s, %.3g L would take about %s from %s (t = (V/S)·ln(p0/p), a lower bound)",
		r.Guide.Speed*1000, r.Guide.Volume*1000, time.Duration(t*float64(time.Second)).Round(time.Second), calib.Format(r.Start, r.Unit))
}
