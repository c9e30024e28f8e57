package calib

import (
	"errors"
	"fmt"
	"math"
	"strings"
)

// A Thermocouple is one of the letter-designated thermocouple types (B, E,
// J, K, N, R, S, T) with the reference functions and inverses of NIST
// Monograph 175 on the ITS-90 (coefficients in thermocouple_coeffs.go).
// The zero Thermocouple is not a type; get one from ThermocoupleType.
//
// EMF gives the reference function E(t) for a reference junction at 0 °C.
// Temperature inverts it: the published inverse polynomial gives a first
// value (within its stated error band, a few hundredths of a kelvin), which
// Newton steps on E(t) then refine until E(t) matches the EMF to well below
// a nanovolt, so a temperature and its EMF agree both ways. The inverse is
// defined where NIST publishes one (type K: −200 … 1372 °C, while E(t)
// runs from −270 °C; type B: 250 … 1820 °C, because its EMF is not
// single-valued below about 40 °C).
type Thermocouple struct{ t *tcTable }

// ThermocoupleType returns the type named by its letter, in either case,
// with or without a leading "type".
func ThermocoupleType(name string) (Thermocouple, error) {
	n := strings.TrimSpace(name)
	if len(n) > 4 && strings.EqualFold(n[:4], "type") {
		n = strings.TrimSpace(n[4:])
	}
	for _, t := range tcTables {
		if strings.EqualFold(n, t.name) {
			return Thermocouple{t}, nil
		}
	}
	return Thermocouple{}, fmt.Errorf("unknown thermocouple type %q (known: %s)", name, strings.Join(ThermocoupleTypes(), ", "))
}

// ThermocoupleTypes lists the known types' letters.
func ThermocoupleTypes() []string {
	names := make([]string, len(tcTables))
	for i, t := range tcTables {
		names[i] = t.name
	}
	return names
}

// Name returns the type's letter, or "" for the zero Thermocouple.
func (tc Thermocouple) Name() string {
	if tc.t == nil {
		return ""
	}
	return tc.t.name
}

// Legs names the type's thermoelements, positive :: negative.
func (tc Thermocouple) Legs() string {
	if tc.t == nil {
		return ""
	}
	return tc.t.legs
}

// TemperatureRange is the span of the reference function E(t), in °C.
func (tc Thermocouple) TemperatureRange() (lo, hi float64) {
	if tc.t == nil {
		return math.NaN(), math.NaN()
	}
	return tc.t.ref[0].lo, tc.t.ref[len(tc.t.ref)-1].hi
}

// EMFRange is the span of EMF (mV, reference junction at 0 °C) that
// Temperature accepts, and the temperatures at its ends: E(t) at the ends
// of the published inverse's range.
func (tc Thermocouple) EMFRange() (lo, hi, tlo, thi float64) {
	if tc.t == nil {
		return math.NaN(), math.NaN(), math.NaN(), math.NaN()
	}
	tlo, thi = tc.t.inv[0].tlo, tc.t.inv[len(tc.t.inv)-1].thi
	lo, _ = tc.t.emf(tlo)
	hi, _ = tc.t.emf(thi)
	return lo, hi, tlo, thi
}

// EMF returns the thermocouple's EMF in mV at t °C with its reference
// junction at 0 °C. Outside the reference function's range the error wraps
// ErrBelowRange or ErrAboveRange and names the range.
func (tc Thermocouple) EMF(t float64) (float64, error) {
	if tc.t == nil {
		return math.NaN(), errors.New("no thermocouple type given")
	}
	lo, hi := tc.TemperatureRange()
	switch {
	case math.IsNaN(t):
		return math.NaN(), fmt.Errorf("type %s thermocouple: temperature is not a number: %w", tc.t.name, ErrFault)
	case t < lo:
		return math.NaN(), fmt.Errorf("type %s thermocouple: %g °C is %w of its reference function, %g … %g °C", tc.t.name, t, ErrBelowRange, lo, hi)
	case t > hi:
		return math.NaN(), fmt.Errorf("type %s thermocouple: %g °C is %w of its reference function, %g … %g °C", tc.t.name, t, ErrAboveRange, lo, hi)
	}
	e, _ := tc.t.emf(t)
	return e, nil
}

// Temperature returns the temperature in °C at which the thermocouple's
// EMF, with its reference junction at 0 °C, is emf mV. Outside EMFRange the
// error wraps ErrBelowRange or ErrAboveRange and names the range.
func (tc Thermocouple) Temperature(emf float64) (float64, error) {
	if tc.t == nil {
		return math.NaN(), errors.New("no thermocouple type given")
	}
	lo, hi, tlo, thi := tc.EMFRange()
	switch {
	case math.IsNaN(emf):
		return math.NaN(), fmt.Errorf("type %s thermocouple: EMF is not a number: %w", tc.t.name, ErrFault)
	case emf < lo:
		return math.NaN(), fmt.Errorf("type %s thermocouple: %.4g mV is %w, %.3f … %.3f mV (%g … %g °C, reference junction at 0 °C)",
			tc.t.name, emf, ErrBelowRange, lo, hi, tlo, thi)
	case emf > hi:
		return math.NaN(), fmt.Errorf("type %s thermocouple: %.4g mV is %w, %.3f … %.3f mV (%g … %g °C, reference junction at 0 °C)",
			tc.t.name, emf, ErrAboveRange, lo, hi, tlo, thi)
	}
	return tc.t.solve(emf, tc.t.inverse(emf), tlo, thi), nil
}

// Compensated returns the temperature of the measuring junction for an EMF
// of emf mV measured with the reference (cold) junction at coldJunction °C:
// the reference function is referred to 0 °C, so the EMF of the cold
// junction, E(t_cj), is added before inverting, t = E⁻¹(emf + E(t_cj)).
func (tc Thermocouple) Compensated(emf, coldJunction float64) (float64, error) {
	ecj, err := tc.EMF(coldJunction)
	if err != nil {
		return math.NaN(), fmt.Errorf("cold junction: %w", err)
	}
	t, err := tc.Temperature(emf + ecj)
	if err != nil && coldJunction != 0 {
		return math.NaN(), fmt.Errorf("%.4g mV measured, %.4g mV with the cold junction's %g °C added: %w", emf, emf+ecj, coldJunction, err)
	}
	return t, err
}

// EMFBetween returns the EMF in mV of a thermocouple with its measuring
// junction at t °C and its reference junction at coldJunction °C:
// E(t) − E(t_cj).
func (tc Thermocouple) EMFBetween(t, coldJunction float64) (float64, error) {
	ecj, err := tc.EMF(coldJunction)
	if err != nil {
		return math.NaN(), fmt.Errorf("cold junction: %w", err)
	}
	e, err := tc.EMF(t)
	if err != nil {
		return math.NaN(), err
	}
	return e - ecj, nil
}

// emf evaluates the reference function and its slope (mV/°C) at t, which
// must lie in range.
func (tt *tcTable) emf(t float64) (e, slope float64) {
	r := tt.ref[len(tt.ref)-1]
	for _, x := range tt.ref {
		if t <= x.hi {
			r = x
			break
		}
	}
	e, slope = polyAndSlope(r.c, t)
	if tt.expo != nil && t > 0 {
		a0, a1, a2 := tt.expo[0], tt.expo[1], tt.expo[2]
		x := a0 * math.Exp(a1*(t-a2)*(t-a2))
		e += x
		slope += x * 2 * a1 * (t - a2)
	}
	return e, slope
}

// inverse evaluates the published inverse polynomial for emf, which must
// lie in range. Where sub-ranges overlap (types R and S near 1064 °C) the
// first that holds emf is used.
func (tt *tcTable) inverse(emf float64) float64 {
	r := tt.inv[len(tt.inv)-1]
	for _, x := range tt.inv {
		if emf <= x.hi {
			r = x
			break
		}
	}
	t, _ := polyAndSlope(r.d, emf)
	return t
}

// solve refines t0 by Newton steps on E(t) = emf, kept inside [lo, hi].
// The reference functions rise monotonically over the inverse's range, so
// from the inverse polynomial's value (hundredths of a kelvin off) two or
// three steps reach float64 precision.
func (tt *tcTable) solve(emf, t0, lo, hi float64) float64 {
	t := math.Min(math.Max(t0, lo), hi)
	for range 20 {
		e, s := tt.emf(t)
		if !(s > 0) {
			break
		}
		next := math.Min(math.Max(t-(e-emf)/s, lo), hi)
		done := math.Abs(next-t) < 1e-10
		t = next
		if done {
			break
		}
	}
	return t
}

// polyAndSlope evaluates Σ c_i·x^i and its derivative by Horner's rule.
func polyAndSlope(c []float64, x float64) (v, d float64) {
	for i := len(c) - 1; i >= 0; i-- {
		d = d*x + v
		v = v*x + c[i]
	}
	return v, d
}

// ThermocoupleInput is the transfer of a temperature gauge whose raw value
// is a thermocouple's EMF: raw × MillivoltsPerUnit is the EMF in mV
// (1 for a reading in mV, 1000 for one in V), measured with the reference
// junction at ColdJunction °C. Apply returns °C; an EMF outside the type's
// range is ErrBelowRange or ErrAboveRange, never a clamped value.
type ThermocoupleInput struct {
	Type              Thermocouple
	MillivoltsPerUnit float64
	ColdJunction      float64 // °C
}

// Apply returns the measuring junction's temperature in °C.
func (x ThermocoupleInput) Apply(raw float64) (float64, error) {
	return x.Type.Compensated(raw*x.MillivoltsPerUnit, x.ColdJunction)
}
