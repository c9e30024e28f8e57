package alerts

import (
	"errors"
	"fmt"
	"math"
)

// PumpDown describes pumping a chamber through a constant effective speed,
// for the guidance a pump-down deadline offers: the pressure falls as
//
//	p(t) = pl + (p0 − pl)·e^(−S·t/V),  pl = Base + Load/Speed,
//
// so the expected time from p0 to p is t = (V/S)·ln((p0 − pl)/(p − pl)),
// which is (V/S)·ln(p0/p) with no gas load and no base pressure. Real
// pump-downs from atmosphere are slower once the flow leaves the viscous
// regime and the walls outgas: treat the figure as a lower bound.
type PumpDown struct {
	Volume float64 // chamber volume, m³
	Speed  float64 // effective pumping speed at the chamber, m³/s
	Load   float64 // steady gas load (leak plus outgassing), Pa·m³/s; 0 for none
	Base   float64 // the pump's own base pressure, Pa; 0 for none
}

func (d PumpDown) check() error {
	switch {
	case !(d.Volume > 0) || math.IsInf(d.Volume, 0):
		return fmt.Errorf("pump-down volume %g m³ must be positive and finite", d.Volume)
	case !(d.Speed > 0) || math.IsInf(d.Speed, 0):
		return fmt.Errorf("pump-down speed %g m³/s must be positive and finite", d.Speed)
	case !(d.Load >= 0) || math.IsInf(d.Load, 0):
		return fmt.Errorf("pump-down gas load %g Pa·m³/s must be zero or positive", d.Load)
	case !(d.Base >= 0) || math.IsInf(d.Base, 0):
		return fmt.Errorf("pump-down base pressure %g Pa must be zero or positive", d.Base)
	}
	return nil
}

// Limit returns the lowest pressure the pumping tends to, Base + Load/Speed
// (p = Q/S for the gas load alone), in Pa.
func (d PumpDown) Limit() float64 { return d.Base + d.Load/d.Speed }

// ErrBelowLimit reports a target pressure at or below what the pumping can reach.
var ErrBelowLimit = errors.New("the target is at or below the pressure this pumping can reach")

// Time returns the expected time in seconds to pump from p0 down to p (Pa).
// A target at or below Limit gives ErrBelowLimit; p ≥ p0 gives 0.
func (d PumpDown) Time(p0, p float64) (float64, error) {
	if err := d.check(); err != nil {
		return 0, err
	}
	if !(p0 > 0) || !(p > 0) || math.IsInf(p0, 0) || math.IsInf(p, 0) {
		return 0, fmt.Errorf("pump-down pressures must be positive and finite, got %g Pa to %g Pa", p0, p)
	}
	if p >= p0 {
		return 0, nil
	}
	pl := d.Limit()
	if p <= pl {
		return 0, fmt.Errorf("target %g Pa, limit %g Pa: %w", p, pl, ErrBelowLimit)
	}
	return d.Volume / d.Speed * math.Log((p0-pl)/(p-pl)), nil
}

// Pressure returns the expected pressure t seconds after pumping from p0 starts.
func (d PumpDown) Pressure(p0, t float64) float64 {
	pl := d.Limit()
	return pl + (p0-pl)*math.Exp(-d.Speed*t/d.Volume)
}

// EffectiveSpeed returns the speed of a pump of speed s (m³/s) seen through
// conductances in series (m³/s): 1/S_eff = 1/S + Σ 1/C_i.
func EffectiveSpeed(s float64, conductances ...float64) float64 {
	inv := 1 / s
	for _, c := range conductances {
		inv += 1 / c
	}
	return 1 / inv
}
