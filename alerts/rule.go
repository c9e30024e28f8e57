package alerts

import (
	"fmt"
	"math"
	"time"

	"holdfast/calib"
)

// A Severity ranks how urgently a person must act on an alarm.
type Severity string

// Limit is the simplest rule: the gauge's value above or below a set point
// for at least OnDelay. Values are SI (Pa or °C).
type Limit struct {
	Name     string
	Gauge    string
	Above    float64 // NaN: no upper limit
	Below    float64 // NaN: no lower limit
	OnDelay  time.Duration
	Severity Severity
	Unit     calib.Unit // how messages show values and limits

	// WaitForNormal arms the rule only once the value has been within its
	// limits, so that a pump-down from atmosphere does not raise an alarm
	// meant for a chamber that has reached vacuum.
	WaitForNormal bool
}

// breach reports whether s violates the limit, and which one. A sample that
// is over-range is above any upper limit; under-range is below any lower
// limit. A sample with no value (fault, off) decides nothing.
func (l *Limit) breach(s calib.Sample) (breached, known bool, limit float64, dir string) {
	switch s.Quality {
	case calib.QualityOK:
		if !math.IsNaN(l.Above) && s.Value > l.Above {
			return true, true, l.Above, "above"
		}
		if !math.IsNaN(l.Below) && s.Value < l.Below {
			return true, true, l.Below, "below"
		}
		return false, true, 0, ""
	case calib.QualityOverRange:
		if !math.IsNaN(l.Above) {
			return true, true, l.Above, "above"
		}
		return false, true, 0, ""
	case calib.QualityUnderRange:
		if !math.IsNaN(l.Below) {
			return true, true, l.Below, "below"
		}
		return false, true, 0, ""
	}
	return false, false, 0, ""
}

func (l *Limit) describe(s calib.Sample, limit float64, dir string) string {
	v := s.Quality.String()
	if s.Quality == calib.QualityOK {
		v = calib.Format(s.Value, l.Unit)
	}
	return fmt.Sprintf("%s %s limit %s (reads %s)", l.Gauge, dir, calib.Format(limit, l.Unit), v)
}
