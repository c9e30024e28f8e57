package calib

import (
	"math"
	"testing"
)

func TestGasCorrections(t *testing.T) {
	// REFERENCES.md §5b (makers' mean values, C2): Ar and He, 0.10 mbar indicated.
	for _, tc := range []struct {
		gas       string
		ind, want float64
	}{{"Ar", 10, 17}, {"helium", 10, 8}} {
		c, err := ThermalGasFactor(tc.gas)
		if err != nil || !near(GasCorrection{Factor: c}.Correct(tc.ind), tc.want, 1e-12) {
			t.Errorf("%s: factor %g, %v; want %g Pa from %g", tc.gas, c, err, tc.want, tc.ind)
		}
	}
	// REFERENCES.md §8a (CRC Handbook, C): Ar S = 1.4, 5.0e-6 Pa → 3.5714e-6 Pa; He 1e-6 mbar → 5.5556e-6 mbar.
	for _, tc := range []struct {
		gas       string
		ind, want float64
	}{{"Ar", 5.0e-6, 3.5714e-6}, {"He", 1.0e-4, 5.5556e-4}} {
		s, err := IonSensitivity(tc.gas)
		if err != nil || !near(tc.ind/s, tc.want, 1e-4) {
			t.Errorf("%s: sensitivity %g, %v; want %g", tc.gas, s, err, tc.want)
		}
	}
	if _, err := ThermalGasFactor("SF6"); err == nil {
		t.Error("SF6 has no thermal factor in the table, but one was returned")
	}
	if _, err := IonSensitivity("unobtainium"); err == nil {
		t.Error("unknown gas accepted")
	}
}

// A user curve overrides the factor and passes through its own points.
func TestGasCurve(t *testing.T) {
	g, err := NewGasCurve([]float64{1, 10, 100}, []float64{1.7, 20, 400})
	if err != nil {
		t.Fatal(err)
	}
	corr := GasCorrection{Factor: 1.7, Curve: g}
	if got := corr.Correct(10); math.Abs(got-20) > 1e-9 {
		t.Errorf("Correct(10) = %g, want 20 from the curve", got)
	}
	if _, err := NewGasCurve([]float64{1, 10}, []float64{5, 4}); err == nil {
		t.Error("falling curve accepted")
	}
}
