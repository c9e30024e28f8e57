package daemon

import (
	"math"
	"testing"
	"time"

	"holdfast/calib"
	"holdfast/daemon/store"
)

// reprocessCal is a heat-loss calibration through three points on the
// curve raw = S0 + A·p/(1 + p/p_t) with S0 = 2, A = 0.5, p_t = 100
// (REFERENCES.md §5b), taken at 5, 50 and 500 Pa. By hand:
//
//	raw(5)   = 2 + 2.5/1.05  = 4.380952
//	raw(50)  = 2 + 25/1.5    = 18.666667
//	raw(500) = 2 + 250/6     = 43.666667
func reprocessCal(t *testing.T) *calib.Calibration {
	t.Helper()
	h := calib.HeatLoss{S0: 2, A: 0.5, Pt: 100}
	var pts []calib.Point
	for _, p := range []float64{5, 50, 500} {
		pts = append(pts, calib.Point{Raw: h.Signal(p), Reference: p})
	}
	c, err := calib.Fit(calib.ModelHeatLoss, pts, calib.FitOptions{})
	if err != nil {
		t.Fatal(err)
	}
	return c
}

// Reprocessing never turns a stored ok sample into a flagged one unless
// asked to recheck ranges.
func TestReprocessKeepsOKSamples(t *testing.T) {
	c := reprocessCal(t)
	x := calib.Extended{Cal: c} // no instrument curve: the model extended
	at := time.Date(2026, 3, 2, 8, 0, 0, 0, time.UTC)
	for _, tc := range []struct {
		name    string
		raw     float64
		recheck bool
		want    calib.Quality
		value   float64 // NaN: kept as stored
	}{
		// raw 2.25 is below the fitted 4.380952 but above S0 = 2: the model
		// extended gives p = s·p_t/(A·p_t − s), s = 0.25: 25/49.75 = 0.502513 Pa.
		{"below the fitted range", 2.25, false, calib.QualityExtrapolated, 0.502513},
		// raw 1.9 is below S0: no pressure at all; the stored value stays.
		{"below the zero signal", 1.9, false, calib.QualityOK, math.NaN()},
		{"below the zero signal, rechecked", 1.9, true, calib.QualityUnderRange, math.NaN()},
		// raw 18.666667 is the 50 Pa point itself.
		{"inside", 18.666667, false, calib.QualityOK, 50},
	} {
		t.Run(tc.name, func(t *testing.T) {
			p := store.Point{At: at, Raw: tc.raw, Value: 123, Quality: uint8(calib.QualityOK), Calibration: 7}
			got, _ := recompute(p, x, 9, tc.recheck)
			if calib.Quality(got.Quality) != tc.want {
				t.Fatalf("quality %s, want %s", calib.Quality(got.Quality), tc.want)
			}
			switch {
			case math.IsNaN(tc.value) && tc.want == calib.QualityOK:
				if got != p {
					t.Errorf("point %+v; want it kept as stored %+v", got, p)
				}
			case math.IsNaN(tc.value):
				if !math.IsNaN(got.Value) {
					t.Errorf("value %g; want none", got.Value)
				}
			case math.Abs(got.Value-tc.value) > 1e-5*tc.value || got.Calibration != 9:
				t.Errorf("value %g from calibration %d; want %g from 9", got.Value, got.Calibration, tc.value)
			}
		})
	}
}
