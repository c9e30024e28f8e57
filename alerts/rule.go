package alerts

import (
	"fmt"
	"math"
	"time"

	"holdfast/calib"
)

// A Rule decides whether an alarm's condition holds. The Engine applies the
// on- and off-delays, the states and the history; a rule only looks at
// values. Observe is called with every sample of the gauges the rule names;
// Tick with the engine's clock, for rules that depend on time passing (a
// gauge falling silent). active tells whether the alarm is in alarm now, so
// that a rule can apply a deadband on the way out.
type Rule interface {
	Kind() string
	Gauges() []string
	Observe(gauge string, s calib.Sample, active bool) Condition
	Tick(now time.Time, active bool) Condition
}

// A Condition is what a rule concluded. Known false means the input decides
// nothing (a faulty sample for a limit rule): the alarm keeps its state.
type Condition struct {
	Known  bool
	Active bool
	Value  float64 // the deciding value, SI (NaN when none)
	Limit  float64 // the limit it was held against, SI (NaN when none)
	// ValueText and LimitText show Value and Limit in the user's unit.
	ValueText, LimitText string
	Unit                 string // symbol of that unit
	Detail               string // what holds, in words: "above the 10 Pa limit"
}

func unknown() Condition { return Condition{Value: math.NaN(), Limit: math.NaN()} }

// Limit is the limit rule: the gauge's value above Above or below Below
// (SI, NaN for none). Once in alarm, the value must come back past the limit
// by Deadband (SI, same dimension) before the condition clears, so a value
// hovering at the limit does not chatter. An over-range sample is above any
// upper limit, an under-range one below any lower limit; an extrapolated
// sample (outside its calibration's range) is held against the limits like
// an ok one, so a limit never goes silent at a calibration's edge, and its
// reading says extrapolated; a sample with no value decides nothing (stale
// and fault rules speak for it).
type Limit struct {
	Gauge    string
	Above    float64
	Below    float64
	Deadband float64
	Unit     calib.Unit // how messages show values and limits

	// WaitForNormal arms the rule only once the value has been within its
	// limits, so that a pump-down from atmosphere does not raise an alarm
	// meant for a chamber that has reached vacuum.
	WaitForNormal bool
	armed         bool
}

// Kind returns "limit".
func (l *Limit) Kind() string { return "limit" }

// Gauges returns the one gauge the limit watches.
func (l *Limit) Gauges() []string { return []string{l.Gauge} }

// Tick decides nothing: a limit depends on samples only.
func (l *Limit) Tick(time.Time, bool) Condition { return unknown() }

// Observe compares s with the limits, with the deadband while active.
func (l *Limit) Observe(_ string, s calib.Sample, active bool) Condition {
	db := 0.0
	if active {
		db = l.Deadband
	}
	c := Condition{Known: true, Value: s.Value, Limit: math.NaN(), Unit: l.Unit.Symbol()}
	c.ValueText = s.Quality.String()
	switch s.Quality {
	case calib.QualityOK, calib.QualityExtrapolated:
		c.ValueText = calib.Format(s.Value, l.Unit)
		if s.Quality == calib.QualityExtrapolated {
			c.ValueText += ", extrapolated"
		}
		switch {
		case !math.IsNaN(l.Above) && s.Value > l.Above-db:
			c.Active, c.Limit = s.Value > l.Above || active, l.Above
		case !math.IsNaN(l.Below) && s.Value < l.Below+db:
			c.Active, c.Limit = s.Value < l.Below || active, l.Below
		}
	case calib.QualityOverRange:
		c.Value, c.Limit, c.Active = math.NaN(), l.Above, !math.IsNaN(l.Above)
	case calib.QualityUnderRange:
		c.Value, c.Limit, c.Active = math.NaN(), l.Below, !math.IsNaN(l.Below)
	default:
		return unknown()
	}
	if !l.armed && l.WaitForNormal {
		if c.Active {
			return unknown()
		}
		l.armed = true
	}
	c.Detail = l.detail(&c)
	return c
}

func (l *Limit) detail(c *Condition) string {
	if math.IsNaN(c.Limit) {
		return fmt.Sprintf("within limits (reads %s)", c.ValueText)
	}
	c.LimitText = calib.Format(c.Limit, l.Unit)
	dir := "above"
	if c.Limit == l.Below {
		dir = "below"
	}
	return fmt.Sprintf("%s the %s limit (reads %s)", dir, c.LimitText, c.ValueText)
}
