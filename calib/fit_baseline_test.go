package calib

import (
	"math"
	"testing"
)

// A linear 10 Torr full-scale gauge (REFERENCES.md §6a: 6.0 V → 799.934 Pa)
// that reads 0.012 V at base vacuum: after the zero baseline, 6.012 V reads
// 799.934 Pa again.
func TestBaselineZero(t *testing.T) {
	var pts []Point
	for _, u := range []float64{0.5, 2, 5, 9} {
		pts = append(pts, Point{Raw: u, Reference: u / 10 * 10 * torr})
	}
	c := mustFit(t, ModelLinear, pts, FitOptions{})
	s, err := c.WithBaseline(Baseline{Raw: 0.012, Pressure: 0})
	if err != nil {
		t.Fatal(err)
	}
	if p, err := s.Apply(6.012); err != nil || math.Abs(p-799.934) > 1e-3 {
		t.Errorf("Apply(6.012) = %g, %v; want 799.934 Pa", p, err)
	}
}

// A heat-loss gauge re-zeroed at a known 1 Pa keeps reading its model.
func TestBaselineHeatLoss(t *testing.T) {
	h := HeatLoss{S0: 0.35, A: 0.021, Pt: 180}
	var pts []Point
	for _, p := range logSpaced(0.1, 1e4, 10) {
		pts = append(pts, Point{Raw: h.Signal(p), Reference: p})
	}
	c := mustFit(t, ModelHeatLoss, pts, FitOptions{})
	raw, err := c.RawAt(1)
	if err != nil || math.Abs(raw-h.Signal(1)) > 1e-9 {
		t.Fatalf("RawAt(1 Pa) = %g, %v; want %g", raw, err, h.Signal(1))
	}
	s, err := c.WithBaseline(Baseline{Raw: h.Signal(1) + 0.005, Pressure: 1})
	if err != nil {
		t.Fatal(err)
	}
	if p, _ := s.Apply(h.Signal(50) + 0.005); math.Abs(p/50-1) > 1e-6 {
		t.Errorf("after the shift 50 Pa reads %g", p)
	}
	if _, err := c.RawAt(1e9); err == nil {
		t.Error("RawAt far above saturation succeeded")
	}
}
