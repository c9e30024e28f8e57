package calib

import (
	"math"
	"testing"
)

// Hand-computed from the first-order form (common practice, see Ambient):
// 5 K above the reference, zero 0.01/K and span 0.002/K turn a raw 2.10
// into (2.10 − 0.05)/1.01 = 2.029702970…; at the reference it is unchanged.
func TestAmbientApply(t *testing.T) {
	a := Ambient{Reference: 22, Zero: 0.01, Span: 0.002}
	for _, c := range []struct{ raw, t, want float64 }{
		{2.10, 27, 2.05 / 1.01},
		{2.10, 22, 2.10},
		{2.10, 17, 2.15 / 0.99},
	} {
		got, err := a.Apply(c.raw, c.t)
		if err != nil || math.Abs(got-c.want) > 1e-12 {
			t.Errorf("Apply(%g, %g °C) = %v, %v; want %v", c.raw, c.t, got, err, c.want)
		}
	}
	// Applying the drift and then the correction gives back the signal.
	raw := 3.3
	drifted := raw*(1+a.Span*8) + a.Zero*8
	if got, _ := a.Apply(drifted, 30); math.Abs(got-raw) > 1e-12 {
		t.Errorf("round trip: %v, want %v", got, raw)
	}
	if _, err := (Ambient{Span: -0.05}).Apply(1, 40); err == nil {
		t.Error("a span correction that inverts the signal was applied")
	}
	if err := (Ambient{Span: 0.5}).Validate(); err == nil {
		t.Error("a 50 %/K span validated")
	}
}
