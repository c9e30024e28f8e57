package calib

import (
	"errors"
	"fmt"
	"math"
)

// Table is an analogue output given as points (volts, pressure), for gauges
// whose output has no closed form (convection gauges' S-shaped curves). It
// interpolates log10 of the pressure over the voltage with a monotone cubic
// (PCHIP), so between points the curve neither overshoots nor turns back,
// and points sampled from a log-linear output are reproduced exactly. A
// signal outside the table's first and last voltage is outside the range
// the table describes: below the first point it is under-range (or over-
// range, for a table whose pressure falls as the voltage rises), and so on.
// Window, when set, is checked first.
type Table struct {
	volts []float64
	unit  Unit
	win   Window
	rises bool
	curve *PCHIP
}

// NewTable builds a table transfer. Volts must strictly increase; pressures
// must be positive and strictly monotone (either way).
func NewTable(volts, pressures []float64, unit Unit, win Window) (*Table, error) {
	var errs []error
	if len(volts) < 2 || len(volts) != len(pressures) {
		errs = append(errs, fmt.Errorf("points: want at least two (volts, pressure) points, got %d volts and %d pressures", len(volts), len(pressures)))
	}
	logs := make([]float64, len(pressures))
	for i, p := range pressures {
		if !(p > 0) || math.IsInf(p, 0) {
			errs = append(errs, fmt.Errorf("points[%d]: pressure must be positive and finite, got %g", i, p))
		}
		logs[i] = math.Log10(p)
	}
	for i := 1; i < len(volts) && i < len(pressures); i++ {
		if !(volts[i] > volts[i-1]) {
			errs = append(errs, fmt.Errorf("points[%d]: volts must strictly increase, got %g after %g", i, volts[i], volts[i-1]))
		}
		if (pressures[i] > pressures[i-1]) != (pressures[1] > pressures[0]) || pressures[i] == pressures[i-1] {
			errs = append(errs, fmt.Errorf("points[%d]: pressures must be strictly monotone, got %g after %g", i, pressures[i], pressures[i-1]))
		}
	}
	errs = append(errs, checkPressureUnit(unit), win.Validate())
	if err := errors.Join(errs...); err != nil {
		return nil, err
	}
	curve, err := NewPCHIP(volts, logs)
	if err != nil {
		return nil, fmt.Errorf("points: %w", err)
	}
	return &Table{volts: append([]float64(nil), volts...), unit: unit, win: win,
		rises: pressures[1] > pressures[0], curve: curve}, nil
}

// Apply returns the pressure in Pa for the signal u in volts.
func (t *Table) Apply(u float64) (float64, error) {
	if err := t.win.check(u); err != nil {
		return 0, err
	}
	lo, hi := t.volts[0], t.volts[len(t.volts)-1]
	low, high := ErrBelowRange, ErrAboveRange
	if !t.rises {
		low, high = high, low
	}
	switch {
	case u < lo:
		return 0, fmt.Errorf("signal %g V before the table's first point %g V: %w", u, lo, low)
	case u > hi:
		return 0, fmt.Errorf("signal %g V past the table's last point %g V: %w", u, hi, high)
	}
	return t.unit.ToSI(math.Pow(10, t.curve.At(u))), nil
}
