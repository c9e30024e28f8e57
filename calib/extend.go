package calib

import (
	"errors"
	"fmt"
	"math"
)

// Extended is a calibration as a gauge applies it live. Inside the
// calibration's valid range it is the calibration. Outside, the gauge keeps
// reading, with an error wrapping ErrExtrapolated (QualityExtrapolated):
//
//   - heat-loss, linear and log-linear calibrations extend their own model,
//     whose form holds beyond the points (for heat-loss it is the physics
//     of the gauge), so the reading stays continuous at the range's edge
//     and keeps the calibration's gas and sensor corrections;
//   - pchip and poly calibrations interpolate and mean nothing beyond their
//     points, so outside they use the instrument's own curve.
//
// Where the first choice has no value (at or below the heat-loss zero
// signal, beyond saturation) or contradicts the calibration (a value below
// the range's top pressure for a raw signal above it, or the reverse), the
// other is tried. Only when neither gives a pressure on the right side of
// the range is the sample flagged under- or over-range.
type Extended struct {
	Cal *Calibration
	// Instrument is the gauge's own curve (what it reads with no
	// calibration active); nil when it has none.
	Instrument Transfer
}

// Apply returns the pressure for raw; see Extended.
func (e Extended) Apply(raw float64) (float64, error) {
	p, err := e.Cal.Apply(raw)
	if err == nil || !errors.Is(err, ErrBelowRange) && !errors.Is(err, ErrAboveRange) {
		return p, err
	}
	low := errors.Is(err, ErrBelowRange)
	for _, src := range e.sources() {
		if v, ok := e.try(src, raw, low); ok {
			return v, fmt.Errorf("%s, read on %s: %w", trimRange(err), e.name(src), ErrExtrapolated)
		}
	}
	if _, xerr := e.Cal.Extend(raw); xerr != nil {
		return math.NaN(), fmt.Errorf("%w (%s)", err, trimRange(xerr))
	}
	return math.NaN(), err
}

// Beyond says in words what the gauge reads outside the calibrated range.
func (e Extended) Beyond() string {
	s := e.sources()
	out := e.name(s[0])
	if len(s) > 1 {
		out += ", or where that has no value " + e.name(s[1])
	}
	return out + ", with quality extrapolated; where neither has a value the sample is flagged under- or over-range"
}

type source int

const (
	fromModel source = iota
	fromInstrument
)

// sources lists where values outside the range come from, in order.
func (e Extended) sources() []source {
	var s []source
	switch e.Cal.Model {
	case ModelHeatLoss, ModelLinear, ModelLogLinear:
		s = []source{fromModel, fromInstrument}
	default:
		s = []source{fromInstrument, fromModel}
	}
	if e.Instrument == nil {
		s = []source{fromModel}
	}
	return s
}

func (e Extended) name(s source) string {
	if s == fromModel {
		return "the " + e.Cal.Model + " model extended"
	}
	return "the instrument's own curve"
}

// try returns the value src gives for raw if it is a pressure on the side
// of the range that raw left (below the bottom pressure when low, above the
// top one otherwise).
func (e Extended) try(src source, raw float64, low bool) (float64, bool) {
	var v float64
	var err error
	if src == fromModel {
		v, err = e.Cal.Extend(raw)
	} else {
		v, err = e.Instrument.Apply(raw)
	}
	if err != nil || !(v > 0) || math.IsInf(v, 0) {
		return 0, false
	}
	if low {
		return v, v <= e.Cal.Valid.PressureMin
	}
	return v, v >= e.Cal.Valid.PressureMax
}

// trimRange drops the sentinel's words from a range error's message.
func trimRange(err error) string {
	s := err.Error()
	for _, sentinel := range []error{ErrBelowRange, ErrAboveRange} {
		if suffix := ": " + sentinel.Error(); len(s) > len(suffix) && s[len(s)-len(suffix):] == suffix {
			return s[:len(s)-len(suffix)]
		}
	}
	return s
}

// Covers says in words the raw and pressure range a calibration was fitted
// over.
func (c *Calibration) Covers() string {
	v := c.Valid
	return fmt.Sprintf("raw %.6g … %.6g, %s … %s", v.RawMin, v.RawMax, fmtPa(v.PressureMin), fmtPa(v.PressureMax))
}

func fmtPa(p float64) string { return fmt.Sprintf("%.4g Pa", p) }
