package calib

import (
	"errors"
	"fmt"
	"math"
)

// A Window is the span of an analogue output in which a gauge's signal is a
// measurement. Many gauges drive their output below the span to signal a
// fault (a broken filament, a missing sensor) and above it to signal over-
// range or a fault. Below and Above say what a signal outside means:
// QualityUnderRange, QualityOverRange or QualitySensorFault; left at
// QualityOK (the zero value), Below means sensor-fault and Above over-range.
// Min and Max both zero means no window. A signal exactly at Min or Max is
// inside.
type Window struct {
	Min, Max     float64 // volts
	Below, Above Quality
}

func (w Window) active() bool { return w.Min != 0 || w.Max != 0 }

// Validate reports a window that cannot be applied.
func (w Window) Validate() error {
	if !w.active() {
		return nil
	}
	var errs []error
	if !(w.Min < w.Max) || math.IsInf(w.Min, 0) || math.IsInf(w.Max, 0) {
		errs = append(errs, fmt.Errorf("valid_volts: want [min, max] with min < max, got [%g, %g]", w.Min, w.Max))
	}
	for _, q := range []struct {
		name string
		q    Quality
	}{{"below", w.Below}, {"above", w.Above}} {
		if q.q != QualityOK && q.q != QualityUnderRange && q.q != QualityOverRange && q.q != QualitySensorFault {
			errs = append(errs, fmt.Errorf("valid_volts.%s: want under-range, over-range or sensor-fault, got %s", q.name, q.q))
		}
	}
	return errors.Join(errs...)
}

// check returns nil for a signal inside the window, else the error the
// window's quality for that side stands for.
func (w Window) check(u float64) error {
	if math.IsNaN(u) {
		return fmt.Errorf("signal is not a number: %w", ErrFault)
	}
	if !w.active() {
		return nil
	}
	switch {
	case u < w.Min:
		return fmt.Errorf("signal %g V below the valid %g V: %w", u, w.Min, qualityErr(w.Below, QualitySensorFault))
	case u > w.Max:
		return fmt.Errorf("signal %g V above the valid %g V: %w", u, w.Max, qualityErr(w.Above, QualityOverRange))
	}
	return nil
}

func qualityErr(q, unset Quality) error {
	if q == QualityOK {
		q = unset
	}
	switch q {
	case QualityUnderRange:
		return ErrBelowRange
	case QualityOverRange:
		return ErrAboveRange
	}
	return ErrFault
}

func checkPressureUnit(u Unit) error {
	if u.Dim != Pressure {
		return fmt.Errorf("unit: want a pressure unit such as mbar, Torr or Pa, got %q", u.Name)
	}
	return nil
}

// LogLinear is the logarithmic analogue output of many active gauges:
//
//	U = c + d·log10(p/unit)   ⇔   p = unit·10^((U − c)/d)
//
// with d the slope in volts per decade and c the offset in volts for the
// stated unit (the voltage at 1 unit). Both are parameters, never presets:
// a rounded slope shifts the top of the range by about 1 %.
type LogLinear struct {
	VoltsPerDecade float64
	OffsetVolts    float64
	Unit           Unit
	Window         Window
}

// Validate reports parameters that cannot describe a gauge, naming each field.
func (t LogLinear) Validate() error {
	var errs []error
	if !(t.VoltsPerDecade != 0) || math.IsNaN(t.VoltsPerDecade) || math.IsInf(t.VoltsPerDecade, 0) {
		errs = append(errs, fmt.Errorf("volts_per_decade: want a finite, non-zero slope, got %g", t.VoltsPerDecade))
	}
	if math.IsNaN(t.OffsetVolts) || math.IsInf(t.OffsetVolts, 0) {
		errs = append(errs, fmt.Errorf("offset_volts: want a finite offset, got %g", t.OffsetVolts))
	}
	errs = append(errs, checkPressureUnit(t.Unit), t.Window.Validate())
	return errors.Join(errs...)
}

// Apply returns the pressure in Pa for the signal u in volts.
func (t LogLinear) Apply(u float64) (float64, error) {
	if err := t.Validate(); err != nil {
		return 0, err
	}
	if err := t.Window.check(u); err != nil {
		return 0, err
	}
	return t.Unit.ToSI(math.Pow(10, (u-t.OffsetVolts)/t.VoltsPerDecade)), nil
}

// Linear is a linear analogue output: p = (U − U0)/(U_FS − U0)·p_FS, the
// published form p = (U/U_FS)·p_FS when ZeroVolts is 0 (a 0–10 V output),
// with ZeroVolts for outputs with a live zero such as 2–10 V (common
// practice).
type Linear struct {
	ZeroVolts      float64
	FullScaleVolts float64
	FullScale      float64 // pressure at FullScaleVolts, in Unit
	Unit           Unit
	Window         Window
}

// Validate reports parameters that cannot describe a gauge, naming each field.
func (t Linear) Validate() error {
	var errs []error
	if !(t.FullScaleVolts != t.ZeroVolts) || math.IsNaN(t.FullScaleVolts-t.ZeroVolts) || math.IsInf(t.FullScaleVolts-t.ZeroVolts, 0) {
		errs = append(errs, fmt.Errorf("full_scale_volts: want a finite value other than zero_volts %g, got %g", t.ZeroVolts, t.FullScaleVolts))
	}
	if !(t.FullScale > 0) || math.IsInf(t.FullScale, 0) {
		errs = append(errs, fmt.Errorf("full_scale: want a positive pressure, got %g", t.FullScale))
	}
	errs = append(errs, checkPressureUnit(t.Unit), t.Window.Validate())
	return errors.Join(errs...)
}

// Apply returns the pressure in Pa for the signal u in volts.
func (t Linear) Apply(u float64) (float64, error) {
	if err := t.Validate(); err != nil {
		return 0, err
	}
	if err := t.Window.check(u); err != nil {
		return 0, err
	}
	return t.Unit.ToSI((u - t.ZeroVolts) / (t.FullScaleVolts - t.ZeroVolts) * t.FullScale), nil
}
