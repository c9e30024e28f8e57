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
	return overdue(now.Sub(r.last), r.After, "has sent no sample for %s (limit %s)", "is answering again")
}

// overdue is the condition of a rule that fires when something has lasted
// too long: gap against limit, with the detail for either side.
func overdue(gap, limit time.Duration, activeFormat, normal string) Condition {
	c := unknown()
	c.Known, c.Active, c.Value, c.Limit, c.Unit = true, gap >= limit, gap.Seconds(), limit.Seconds(), "s"
	c.ValueText, c.LimitText = gap.Round(time.Second).String(), limit.String()
	c.Detail = fmt.Sprintf(activeFormat, c.ValueText, c.LimitText)
	if !c.Active {
		c.Detail = normal
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
	return overdue(now.Sub(r.good), r.After, "has given no valid reading for %s (sensor fault or no answer; limit %s)",
		"reads "+q.String()+" again")
}
