package calib

import (
	"encoding/json"
	"errors"
	"math"
	"strings"
	"testing"
)

func TestCalibrationJSONRoundTrip(t *testing.T) {
	truth := HeatLoss{S0: 0.35, A: 0.021, Pt: 180}
	var heat, logLaw []Point
	for i, p := range logSpaced(0.1, 1e4, 8) {
		heat = append(heat, Point{Raw: truth.Signal(p), Reference: p, Line: i + 2})
		logLaw = append(logLaw, Point{Raw: 4 + math.Log10(p) + 0.01*math.Log10(p)*math.Log10(p), Reference: p})
	}
	for _, m := range []string{ModelLinear, ModelLogLinear, ModelPoly, ModelPCHIP, ModelHeatLoss} {
		t.Run(m, func(t *testing.T) {
			pts := heat
			if m == ModelLogLinear || m == ModelPoly {
				pts = logLaw
			}
			c := mustFit(t, m, pts, FitOptions{ReferenceUncertainty: 0.01, Resolution: 1e-4})
			b, err := json.Marshal(c)
			if err != nil {
				t.Fatal(err)
			}
			if !strings.Contains(string(b), `"format":1`) {
				t.Fatalf("JSON lacks the format field: %s", b)
			}
			var back Calibration
			if err := json.Unmarshal(b, &back); err != nil {
				t.Fatalf("Unmarshal: %v\n%s", err, b)
			}
			for _, raw := range []float64{pts[0].Raw, 0.5, 1.2, 5, pts[7].Raw} {
				p1, e1 := c.Apply(raw)
				p2, e2 := back.Apply(raw)
				if math.Float64bits(p1) != math.Float64bits(p2) || (e1 == nil) != (e2 == nil) {
					t.Errorf("Apply(%g): %g,%v before, %g,%v after the round trip", raw, p1, e1, p2, e2)
				}
			}
		})
	}
}

func TestCalibrationJSONRejects(t *testing.T) {
	for _, tc := range []struct{ name, json, want string }{
		{"format", `{"format":2,"model":"linear"}`, "format 2"},
		{"model", `{"format":1,"model":"spline"}`, "unknown model"},
		{"parameter", `{"format":1,"model":"linear","parameters":{"offset_pa":0}}`, `"pa_per_raw"`},
		{"heat-loss", `{"format":1,"model":"heat-loss","parameters":{"s0":0,"a_per_pa":-1,"pt_pa":5}}`, "a > 0"},
	} {
		t.Run(tc.name, func(t *testing.T) {
			var c Calibration
			err := json.Unmarshal([]byte(tc.json), &c)
			if err == nil || !strings.Contains(err.Error(), tc.want) {
				t.Errorf("error %v, want one containing %q", err, tc.want)
			}
		})
	}
}

// Outside the valid range Apply returns the model extended and a range
// error; where the model has no value (at or below its zero signal) it
// returns NaN and says so, never the range limit as if it were a reading.
func TestCalibrationApplyOutsideRange(t *testing.T) {
	h := HeatLoss{S0: 0.35, A: 0.021, Pt: 180}
	var pts []Point
	for _, p := range logSpaced(1, 1000, 6) {
		pts = append(pts, Point{Raw: h.Signal(p), Reference: p})
	}
	c := mustFit(t, ModelHeatLoss, pts, FitOptions{})
	p, err := c.Apply(h.Signal(0.5))
	if !errors.Is(err, ErrBelowRange) || !near(p, 0.5, 1e-6) || QualityOf(err) != QualityUnderRange {
		t.Errorf("Apply(below) = %g, %v; want 0.5 Pa and ErrBelowRange", p, err)
	}
	p, err = c.Apply(0.1) // below S0 = 0.35: the model has no value
	if !errors.Is(err, ErrBelowRange) || !math.IsNaN(p) {
		t.Errorf("Apply(0.1) = %g, %v; want NaN (no value) and ErrBelowRange", p, err)
	}
	if _, err := c.Extend(0.1); err == nil || !strings.Contains(err.Error(), "zero signal s0 = 0.35") {
		t.Errorf("Extend(0.1) error %v; want one naming the zero signal s0 = 0.35", err)
	}
	p, err = c.Apply(h.Signal(2000))
	if !errors.Is(err, ErrAboveRange) || !near(p, 2000, 1e-6) {
		t.Errorf("Apply(above) = %g, %v; want 2000 Pa and ErrAboveRange", p, err)
	}
	if _, err := c.Apply(math.NaN()); !errors.Is(err, ErrFault) {
		t.Errorf("Apply(NaN) error %v, want ErrFault", err)
	}
}

// GUM (JCGM 100:2008) 5.1.2 and 4.3.7, hand-computed: the invented
// log-linear output B of REFERENCES.md §7a (0.5 V/decade, 5.0 V at 1 Pa, so
// d ln p/dU = ln 10/0.5 = 4.60517 per volt) with a 0.001 V step and a
// reference stated as 0.5 % (k = 2):
//
//	u_ref = 0.005/2 = 2.5e-3
//	u_res = (0.001/2)/√3 · 4.60517 = 1.329398e-3
//	u_fit = 0 (exact points)
//	u_c   = sqrt(2.5e-3² + 1.329398e-3²) = 2.831484e-3;  U = 2·u_c = 5.662967e-3
//
// Points at 3 … 7 V span 10^−4 … 10^4 Pa: eight whole decades, eight ranges.
func TestUncertaintyHandComputed(t *testing.T) {
	if got := CombineStandard(3, 4); got != 5 {
		t.Errorf("CombineStandard(3, 4) = %g, want 5", got)
	}
	pts := []Point{{Raw: 3, Reference: 1e-4}, {Raw: 4, Reference: 1e-2}, {Raw: 5, Reference: 1},
		{Raw: 6, Reference: 1e2}, {Raw: 7, Reference: 1e4}}
	c := mustFit(t, ModelLogLinear, pts, FitOptions{ReferenceUncertainty: 0.005, Resolution: 0.001})
	if n := len(c.Uncertainty.Ranges); n != 8 {
		t.Fatalf("%d ranges, want one per decade (8)", n)
	}
	for _, r := range c.Uncertainty.Ranges {
		if !near(r.Resolution, 1.329398e-3, 1e-5) || !near(r.Combined, 2.831484e-3, 1e-5) || !near(r.Expanded, 5.662967e-3, 1e-5) {
			t.Errorf("range %g…%g Pa: %+v", r.From, r.To, r)
		}
	}
	if u, ok := c.Uncertainty.At(50); !ok || !near(u, 5.662967e-3, 1e-5) {
		t.Errorf("At(50 Pa) = %g, %v", u, ok)
	}
}
