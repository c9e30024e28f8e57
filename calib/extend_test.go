package calib

import (
	"errors"
	"math"
	"strings"
	"testing"
)

// fitted5to500 is a heat-loss calibration through three points of the
// curve raw = S0 + A·p/(1 + p/p_t), S0 = 2, A = 0.5, p_t = 100
// (REFERENCES.md §5b), at 5, 50 and 500 Pa: raw 4.380952, 18.666667,
// 43.666667 (2 + 2.5/1.05, 2 + 25/1.5, 2 + 250/6).
func fitted5to500(t *testing.T) *Calibration {
	t.Helper()
	h := HeatLoss{S0: 2, A: 0.5, Pt: 100}
	var pts []Point
	for _, p := range []float64{5, 50, 500} {
		pts = append(pts, Point{Raw: h.Signal(p), Reference: p})
	}
	return mustFit(t, ModelHeatLoss, pts, FitOptions{})
}

func TestExtendedKeepsReadingOutsideTheFit(t *testing.T) {
	c := fitted5to500(t)
	// The instrument's own curve here reads 10 % high, so which source was
	// used shows in the value.
	own := Scale{Factor: 1.1}
	for _, tc := range []struct {
		name  string
		x     Extended
		raw   float64
		want  float64 // Pa; NaN: flagged
		q     Quality
		words string
	}{
		// raw 2.25: s = 0.25, p = s·p_t/(A·p_t − s) = 25/49.75 = 0.502513 Pa (hand calculation).
		{"heat-loss extends its model below", Extended{c, own}, 2.25, 0.502513, QualityExtrapolated, "heat-loss model extended"},
		// raw 45.5: s = 43.5, p = 4350/6.5 = 669.2308 Pa.
		{"and above", Extended{c, own}, 45.5, 669.2308, QualityExtrapolated, "heat-loss model extended"},
		{"inside", Extended{c, own}, 18.666667, 50, QualityOK, ""},
		// raw 1.9 is below S0 = 2: the model has none, and an instrument
		// curve of 3·raw (5.7 Pa) is not below the 5 Pa edge: flagged.
		{"below the zero signal", Extended{c, Scale{Factor: 3}}, 1.9, math.NaN(), QualityUnderRange, "zero signal"},
		// An instrument reading 0.3·raw gives 0.57 Pa at raw 1.9: below the edge, used.
		{"below the zero signal, instrument curve", Extended{c, Scale{Factor: 0.3}}, 1.9, 0.57, QualityExtrapolated, "instrument's own curve"},
	} {
		t.Run(tc.name, func(t *testing.T) {
			p, err := tc.x.Apply(tc.raw)
			if q := QualityOf(err); q != tc.q {
				t.Fatalf("quality %s (%v), want %s", q, err, tc.q)
			}
			if math.IsNaN(tc.want) != math.IsNaN(p) || !math.IsNaN(p) && math.Abs(p-tc.want) > 1e-5*tc.want {
				t.Errorf("Apply(%g) = %g Pa, want %g", tc.raw, p, tc.want)
			}
			if tc.words != "" && (err == nil || !strings.Contains(err.Error(), tc.words)) {
				t.Errorf("error %v; want it to say %q", err, tc.words)
			}
		})
	}
	if !errors.Is(func() error { _, err := (Extended{Cal: c}).Apply(3); return err }(), ErrExtrapolated) {
		t.Error("Apply below the range without an instrument curve: want ErrExtrapolated")
	}
}

// The combined gauge of deploy/examples/calibration.yaml at 0.4 Pa: the
// capacitance gauge (trusted 20 Pa…1.1 kPa) reads 0.4 Pa, 1.70 decades below
// its span; the ion gauge (1e-7…0.3 Pa) reads 0.4 Pa, 0.125 decades above;
// the Pirani (0.1 Pa…5 kPa), whose calibration was fitted from 5 Pa, is the
// one trusted there.
func TestBlendAtACalibrationEdge(t *testing.T) {
	spans := []Span{{20, 1100}, {0.1, 5000}, {1e-7, 0.3}}
	ok := func(p float64) Sample { return Sample{Value: p, Quality: QualityOK} }
	for _, tc := range []struct {
		name    string
		pirani  Sample
		want    float64
		quality Quality
	}{
		// Extrapolated and in its span: weight 1, the blend is its value.
		{"pirani extrapolated", Sample{Value: 0.41, Quality: QualityExtrapolated}, 0.41, QualityExtrapolated},
		// Blank: 0.4 Pa lies inside the combined range 1e-7 Pa…5 kPa, so it
		// is no over-range; the nearest member's reading stands, marked.
		{"pirani blank", Sample{Value: math.NaN(), Quality: QualityUnderRange}, 0.4, QualityExtrapolated},
		// An ok Pirani wins over nothing else in range.
		{"pirani ok", ok(0.42), 0.42, QualityOK},
	} {
		t.Run(tc.name, func(t *testing.T) {
			got, err := Blend(spans, []Sample{ok(0.4), tc.pirani, ok(0.4)})
			if err != nil || got.Quality != tc.quality || math.Abs(got.Value-tc.want) > 1e-12 {
				t.Errorf("Blend = %g Pa %s (%v); want %g Pa %s", got.Value, got.Quality, err, tc.want, tc.quality)
			}
		})
	}
	// Above every span (a vent to 1e5 Pa): still over-range.
	got, err := Blend(spans, []Sample{{Quality: QualityOverRange}, {Value: 1e5, Quality: QualityExtrapolated}, {Quality: QualityOff}})
	if !errors.Is(err, ErrAboveRange) || got.Quality != QualityOverRange {
		t.Errorf("Blend at 1e5 Pa = %s (%v); want over-range", got.Quality, err)
	}
	// An extrapolated member does not pull an ok one in range.
	got, _ = Blend(spans, []Sample{ok(200), {Value: 300, Quality: QualityExtrapolated}, {Quality: QualityOff}})
	if math.Abs(got.Value-200) > 1e-9 || got.Quality != QualityOK {
		t.Errorf("Blend with an ok cdg at 200 Pa = %g Pa %s; want 200 Pa ok", got.Value, got.Quality)
	}
}
