package calib

import (
	"math"
	"math/rand/v2"
	"testing"
)

// Sets shaped like the ones people bring (synthetic, seeded): 3 to 30
// points, any order, repeats, many decades. Each must fit, and reading the
// points back must agree with the reported residuals.
func TestFitRobustSets(t *testing.T) {
	heat := HeatLoss{S0: 1.2, A: 0.8e-3, Pt: 900} // a bridge signal in volts (demo values)
	rng := rand.New(rand.NewPCG(11, 12))
	gen := func(n int, lo, hi float64, law func(float64) float64, noise float64, repeats bool) []Point {
		var pts []Point
		for _, p := range logSpaced(lo, hi, n) {
			pts = append(pts, Point{Raw: law(p), Reference: p * (1 + noise*rng.NormFloat64())})
			if repeats && len(pts)%3 == 0 {
				pts = append(pts, Point{Raw: law(p), Reference: p * (1 + noise*rng.NormFloat64())})
			}
		}
		rng.Shuffle(len(pts), func(i, j int) { pts[i], pts[j] = pts[j], pts[i] })
		return pts
	}
	logLaw := func(p float64) float64 { return 5.5 + 0.6*math.Log10(p) }
	linLaw := func(p float64) float64 { return 0.002 + p/1333 } // 0–10 V on 10 Torr, 2 mV offset
	for _, tc := range []struct {
		name, model string
		pts         []Point
		maxRes      float64
	}{
		{"heat-loss 3 exact", ModelHeatLoss, gen(3, 1, 1e4, heat.Signal, 0, false), 1e-6},
		{"heat-loss 30 wide", ModelHeatLoss, gen(30, 1e-2, 1e5, heat.Signal, 0.003, true), 0.02},
		{"heat-loss linear part only", ModelHeatLoss, gen(8, 0.1, 5, heat.Signal, 0.002, false), 0.01},
		{"pchip 2", ModelPCHIP, gen(2, 1e-3, 1, logLaw, 0, false), 1e-9},
		{"pchip 30 repeats", ModelPCHIP, gen(30, 1e-4, 1e5, heat.Signal, 0.003, true), 0.02},
		{"poly 3", ModelPoly, gen(3, 1e-6, 1e-2, logLaw, 0.002, false), 0.01},
		{"poly 20", ModelPoly, gen(20, 1e-6, 1e3, logLaw, 0.002, true), 0.01},
		{"log-linear 9 decades", ModelLogLinear, gen(10, 1e-7, 1e2, logLaw, 0.002, false), 0.01},
		{"linear 3", ModelLinear, gen(3, 10, 1300, linLaw, 0.001, false), 0.005},
	} {
		t.Run(tc.name, func(t *testing.T) {
			c := mustFit(t, tc.model, tc.pts, FitOptions{ReferenceUncertainty: 0.01, Resolution: 1e-4})
			if c.Fit.Max > tc.maxRes {
				t.Errorf("max residual %g, want ≤ %g; notes %v", c.Fit.Max, tc.maxRes, c.Fit.Notes)
			}
			for i, p := range tc.pts {
				got, err := c.Apply(p.Raw)
				if err != nil || math.Abs(got/p.Reference-1-c.Fit.Residuals[i]) > 1e-9 {
					t.Errorf("point %d: Apply = %g, %v; the report says residual %g", i+1, got, err, c.Fit.Residuals[i])
				}
			}
			if len(c.Uncertainty.Ranges) == 0 {
				t.Error("no uncertainty ranges")
			}
		})
	}
}

// BenchmarkFitHeatLoss measures a 30-point heat-loss fit.
func BenchmarkFitHeatLoss(b *testing.B) {
	h := HeatLoss{S0: 0.35, A: 0.021, Pt: 180}
	var pts []Point
	for _, p := range logSpaced(0.05, 5e4, 30) {
		pts = append(pts, Point{Raw: h.Signal(p), Reference: p})
	}
	for b.Loop() {
		if _, err := Fit(ModelHeatLoss, pts, FitOptions{}); err != nil {
			b.Fatal(err)
		}
	}
}
