package calib

import (
	"errors"
	"fmt"
	"math"
)

// Ambient corrects a raw signal for the sensor's ambient temperature: a
// thermal-conductivity gauge's zero (the loss through radiation and the
// supports) and span drift as the room or the gauge head warms. With
// ΔT = T − Reference,
//
//	raw' = (raw − Zero·ΔT) / (1 + Span·ΔT)
//
// Zero is in raw units per kelvin, Span a fraction per kelvin. This first-
// order form is common practice, not a standard: the coefficients are the
// user's, found by capturing the gauge's baseline at two ambient
// temperatures (a zero at base vacuum, a span at a fixed pressure).
type Ambient struct {
	Reference float64 // °C: the ambient temperature the calibration was made at
	Zero      float64 // raw units per K
	Span      float64 // per K
}

// Validate reports coefficients that cannot be applied.
func (a Ambient) Validate() error {
	var errs []error
	for _, f := range []struct {
		name string
		v    float64
	}{{"reference", a.Reference}, {"zero_per_kelvin", a.Zero}, {"span_per_kelvin", a.Span}} {
		if math.IsNaN(f.v) || math.IsInf(f.v, 0) {
			errs = append(errs, fmt.Errorf("%s: want a finite number, got %g", f.name, f.v))
		}
	}
	if math.Abs(a.Span) >= 0.1 {
		errs = append(errs, fmt.Errorf("span_per_kelvin: %g is a %.0f %% change per kelvin; want a fraction such as 0.001", a.Span, 100*a.Span))
	}
	return errors.Join(errs...)
}

// Apply returns raw corrected to the reference temperature, for an ambient
// temperature of tC °C.
func (a Ambient) Apply(raw, tC float64) (float64, error) {
	dt := tC - a.Reference
	den := 1 + a.Span*dt
	if !(den > 0) {
		return 0, fmt.Errorf("ambient %g °C is %g K from the reference: the span correction would invert the signal", tC, dt)
	}
	return (raw - a.Zero*dt) / den, nil
}
