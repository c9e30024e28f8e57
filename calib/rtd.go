package calib

import (
	"fmt"
	"math"
	"strings"
)

// An RTD is a platinum resistance thermometer described by the
// Callendar–Van Dusen equation of IEC 60751:
//
//	R(t) = R0·[1 + A·t + B·t² + C·(t − 100 °C)·t³]   −200 °C ≤ t < 0 °C
//	R(t) = R0·(1 + A·t + B·t²)                        0 °C ≤ t ≤ 850 °C
//
// with A = 3.9083e-3 °C⁻¹, B = −5.775e-7 °C⁻², C = −4.183e-12 °C⁻⁴ for the
// standard elements (α = 0.00385055 °C⁻¹; REFERENCES.md §10). R0 is the
// resistance at 0 °C: 100 Ω for a Pt100, 1000 Ω for a Pt1000.
//
// Temperature inverts R(t): in closed form at and above 0 °C (the root of
// the quadratic), by Newton steps below, where the C term makes it a
// quartic.
type RTD struct {
	Name    string  // "pt100", "pt1000", or a user's label
	R0      float64 // Ω at 0 °C
	A, B, C float64
}

// The IEC 60751 coefficients and the equation's range.
const (
	iec60751A = 3.9083e-3
	iec60751B = -5.775e-7
	iec60751C = -4.183e-12
	rtdLow    = -200.0 // °C
	rtdHigh   = 850.0  // °C
)

// PlatinumRTD returns the IEC 60751 element named pt100 or pt1000 (in any
// case; "Pt-100" too).
func PlatinumRTD(name string) (RTD, error) {
	n := strings.ToLower(strings.ReplaceAll(strings.TrimSpace(name), "-", ""))
	switch n {
	case "pt100":
		return RTD{Name: "pt100", R0: 100, A: iec60751A, B: iec60751B, C: iec60751C}, nil
	case "pt1000":
		return RTD{Name: "pt1000", R0: 1000, A: iec60751A, B: iec60751B, C: iec60751C}, nil
	}
	return RTD{}, fmt.Errorf("unknown resistance thermometer %q (known: %s)", name, strings.Join(RTDNames(), ", "))
}

// RTDNames lists the elements PlatinumRTD knows.
func RTDNames() []string { return []string{"pt100", "pt1000"} }

// Validate reports an element that cannot be used.
func (r RTD) Validate() error {
	if !(r.R0 > 0) || math.IsInf(r.R0, 0) || !(r.A > 0) || math.IsInf(r.A, 0) || math.IsNaN(r.B) || math.IsNaN(r.C) {
		return fmt.Errorf("resistance thermometer %q: want R0 > 0 Ω and A > 0, got R0 %g Ω, A %g", r.Name, r.R0, r.A)
	}
	return nil
}

// TemperatureRange is the span of the equation, −200 … 850 °C.
func (RTD) TemperatureRange() (lo, hi float64) { return rtdLow, rtdHigh }

// ResistanceRange is the span of resistance Temperature accepts: R(−200 °C)
// … R(850 °C).
func (r RTD) ResistanceRange() (lo, hi float64) { return r.resistance(rtdLow), r.resistance(rtdHigh) }

// Resistance returns the element's resistance in Ω at t °C. Outside
// −200 … 850 °C the error wraps ErrBelowRange or ErrAboveRange and names
// the range.
func (r RTD) Resistance(t float64) (float64, error) {
	if err := r.Validate(); err != nil {
		return math.NaN(), err
	}
	switch {
	case math.IsNaN(t):
		return math.NaN(), fmt.Errorf("%s: temperature is not a number: %w", r.Name, ErrFault)
	case t < rtdLow:
		return math.NaN(), fmt.Errorf("%s: %g °C is %w of IEC 60751, %g … %g °C", r.Name, t, ErrBelowRange, rtdLow, rtdHigh)
	case t > rtdHigh:
		return math.NaN(), fmt.Errorf("%s: %g °C is %w of IEC 60751, %g … %g °C", r.Name, t, ErrAboveRange, rtdLow, rtdHigh)
	}
	return r.resistance(t), nil
}

// resistance evaluates the Callendar–Van Dusen equation at any t.
func (r RTD) resistance(t float64) float64 {
	w := 1 + r.A*t + r.B*t*t
	if t < 0 {
		w += r.C * (t - 100) * t * t * t
	}
	return r.R0 * w
}

// Temperature returns the temperature in °C at which the element's
// resistance is ohms. Outside ResistanceRange the error wraps ErrBelowRange
// or ErrAboveRange and names the range in Ω and °C.
func (r RTD) Temperature(ohms float64) (float64, error) {
	if err := r.Validate(); err != nil {
		return math.NaN(), err
	}
	lo, hi := r.ResistanceRange()
	switch {
	case math.IsNaN(ohms):
		return math.NaN(), fmt.Errorf("%s: resistance is not a number: %w", r.Name, ErrFault)
	case ohms < lo:
		return math.NaN(), fmt.Errorf("%s: %.5g Ω is %w, %.5g … %.5g Ω (%g … %g °C, IEC 60751)", r.Name, ohms, ErrBelowRange, lo, hi, rtdLow, rtdHigh)
	case ohms > hi:
		return math.NaN(), fmt.Errorf("%s: %.5g Ω is %w, %.5g … %.5g Ω (%g … %g °C, IEC 60751)", r.Name, ohms, ErrAboveRange, lo, hi, rtdLow, rtdHigh)
	}
	// At and above R0 the quadratic's root; written as 2c/(−b − √(b² − 4ac))
	// rather than (−b + √…)/2a, which loses digits to cancellation near 0 °C.
	c := 1 - ohms/r.R0
	t := 2 * c / (-r.A - math.Sqrt(r.A*r.A-4*r.B*c))
	if ohms >= r.R0 || r.C == 0 {
		return t, nil
	}
	// Below 0 °C the quadratic's root is within a few hundredths of a kelvin;
	// Newton steps on the full equation finish the job.
	for range 20 {
		f := r.resistance(t) - ohms
		s := r.R0 * (r.A + 2*r.B*t + r.C*(4*t*t*t-300*t*t))
		next := t - f/s
		done := math.Abs(next-t) < 1e-10
		t = next
		if done {
			break
		}
	}
	return t, nil
}

// RTDInput is the transfer of a temperature gauge whose raw value is a
// resistance thermometer's resistance: raw × OhmsPerUnit is in Ω (1 for a
// reading in Ω, 1000 for one in kΩ). Apply returns °C; a resistance outside
// the element's range is ErrBelowRange or ErrAboveRange, never clamped.
type RTDInput struct {
	RTD         RTD
	OhmsPerUnit float64
}

// Apply returns the element's temperature in °C.
func (x RTDInput) Apply(raw float64) (float64, error) { return x.RTD.Temperature(raw * x.OhmsPerUnit) }
