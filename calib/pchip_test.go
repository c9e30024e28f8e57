package calib

import (
	"math"
	"testing"

	"gonum.org/v1/gonum/interp"
)

// Fritsch & Carlson, SIAM J. Numer. Anal. 17(2) (1980): the "RPN 14" data
// set, monotone with a steep rise and flat tails (values from memory). A
// C² cubic spline overshoots on it; the monotone interpolant must not, and
// must pass through every node (the shape-preservation property of the paper).
var rpn14x = []float64{7.99, 8.09, 8.19, 8.7, 9.2, 10, 12, 15, 20}
var rpn14y = []float64{0, 2.76429e-5, 4.37498e-2, 0.169183, 0.469428, 0.943740, 0.998636, 0.999919, 0.999994}

func TestPCHIPMonotoneAndExactAtKnots(t *testing.T) {
	p, err := NewPCHIP(rpn14x, rpn14y)
	if err != nil {
		t.Fatal(err)
	}
	for i, x := range rpn14x {
		if got := p.At(x); math.Abs(got-rpn14y[i]) > 1e-15 {
			t.Errorf("At(%g) = %g, want the node value %g", x, got, rpn14y[i])
		}
	}
	prev := p.At(rpn14x[0])
	for x := rpn14x[0]; x <= 20; x += 0.001 {
		y := p.At(x)
		if y < prev-1e-15 || y > 1 {
			t.Fatalf("At(%g) = %g after %g: not monotone within [0, 1]", x, y, prev)
		}
		prev = y
	}
}

// The same data through a natural cubic spline does overshoot, so the test
// above can fail for an interpolant that is not shape-preserving.
func TestNaturalSplineOvershootsRPN14(t *testing.T) {
	var nc interp.NaturalCubic
	if err := nc.Fit(rpn14x, rpn14y); err != nil {
		t.Fatal(err)
	}
	over := false
	for x := rpn14x[0]; x <= 20; x += 0.01 {
		over = over || nc.Predict(x) > 1 || nc.Predict(x) < 0
	}
	if !over {
		t.Error("natural cubic stayed in [0, 1]; the monotonicity test would not discriminate")
	}
}

func TestPCHIPRejectsBadNodes(t *testing.T) {
	for _, tc := range []struct{ xs, ys []float64 }{
		{[]float64{1}, []float64{1}},
		{[]float64{1, 1}, []float64{1, 2}},
		{[]float64{1, 2}, []float64{1, math.NaN()}},
	} {
		if _, err := NewPCHIP(tc.xs, tc.ys); err == nil {
			t.Errorf("NewPCHIP(%v, %v) succeeded; want an error", tc.xs, tc.ys)
		}
	}
}

// pchip calibration through points from a log-linear law (the invented
// example A of REFERENCES.md §7a, 0.8 V/decade with 4.0 V at 1 mbar, so
// p = 100·10^((U − 4)/0.8) Pa): between the knots it must stay on the law,
// and repeated raws are merged. By hand: 4.4 V → 100·10^0.5 = 316.228 Pa.
func TestFitPCHIPCalibration(t *testing.T) {
	law := func(u float64) float64 { return 100 * math.Pow(10, (u-4)/0.8) }
	var pts []Point
	for u := 1.0; u <= 9; u++ {
		pts = append(pts, Point{Raw: u, Reference: law(u)})
	}
	// Repeats at 5 V, 1 % high and 1 % low: merged by their geometric mean.
	pts = append(pts, Point{Raw: 5, Reference: law(5) * 1.01}, Point{Raw: 5, Reference: law(5) / 1.01})
	c := mustFit(t, ModelPCHIP, pts, FitOptions{})
	if len(c.Knots) != 9 {
		t.Fatalf("%d knots, want 9 (the repeats merged)", len(c.Knots))
	}
	if got, want := mustApply(t, c, 4.4), 316.228; !near(got, want, 1e-5) {
		t.Errorf("Apply(4.4) = %g, want %g", got, want)
	}
	if c.Fit.Scatter > 1e-3 {
		t.Errorf("leave-one-out scatter %g on an exact law", c.Fit.Scatter)
	}
}
