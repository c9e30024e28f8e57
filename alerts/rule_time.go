package alerts

import (
	"fmt"
	"time"

	"holdfast/calib"
)

// Stale is the stale rule: no sample from the gauge for After. It counts
// from the first Tick when the gauge has never answered.
type Stale struct {
	Gauge string
	After time.Duration
	last  time.Time
}

// Kind returns "stale".
func (r *Stale) Kind() string { return "stale" }

// Gauges returns the gauge watched for silence.
func (r *Stale) Gauges() []string { return []string{r.Gauge} }

// Observe notes that the gauge answered.
func (r *Stale) Observe(_ string, s calib.Sample, _ bool) Condition {
	if s.At.After(r.last) {
		r.last = s.At
	}
	return r.judge(s.At)
}

// Tick reports whether the silence has lasted After by now.
func (r *Stale) Tick(now time.Time, _ bool) Condition {
	if r.last.IsZero() {
		r.last = now
	}
	return r.judge(now)
}

func (r *Stale) judge(now time.Time) Condition {
	gap := now.Sub(r.last)
	c := unknown()
	c.Known, c.Active, c.Value, c.Limit, c.Unit = true, gap >= r.After, gap.Seconds(), r.After.Seconds(), "s"
	c.ValueText, c.LimitText = gap.Round(time.Second).String(), r.After.String()
	c.Detail = fmt.Sprintf("has sent no sample for %s (limit %s)", c.ValueText, c.LimitText)
	if !c.Active {
		c.Detail = "is answering again"
	}
	return c
}

// Fault is the instrument-fault rule: the gauge reports a sensor fault, or
// does not answer, continuously for After. Over- and under-range are not
// faults (the instrument works; the value is outside its range), nor is an
// ionisation gauge switching itself off above its protect pressure.
type Fault struct {
	Gauge string
	After time.Duration
	good  time.Time // the last sample that was not a fault
	seen  bool
}

// Kind returns "fault".
func (r *Fault) Kind() string { return "fault" }

// Gauges returns the gauge watched.
func (r *Fault) Gauges() []string { return []string{r.Gauge} }

// Observe notes a working or a faulty sample.
func (r *Fault) Observe(_ string, s calib.Sample, _ bool) Condition {
	if !r.seen {
		r.good, r.seen = s.At, true
	}
	if s.Quality != calib.QualitySensorFault {
		r.good = s.At
	}
	return r.judge(s.At, s.Quality)
}

// Tick reports a fault or a silence that has lasted After by now.
func (r *Fault) Tick(now time.Time, _ bool) Condition {
	if !r.seen {
		r.good, r.seen = now, true
	}
	return r.judge(now, calib.QualitySensorFault)
}

func (r *Fault) judge(now time.Time, q calib.Quality) Condition {
	bad := now.Sub(r.good)
	c := unknown()
	c.Known, c.Active, c.Value, c.Limit, c.Unit = true, bad >= r.After, bad.Seconds(), r.After.Seconds(), "s"
	c.ValueText, c.LimitText = bad.Round(time.Second).String(), r.After.String()
	c.Detail = fmt.Sprintf("has given no valid reading for %s (sensor fault or no answer; limit %s)", c.ValueText, c.LimitText)
	if !c.Active {
		c.Detail = "reads " + q.String() + " again"
	}
	return c
}
