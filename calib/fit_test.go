package calib

import (
	"errors"
	"math"
	"math/rand/v2"
	"strings"
	"testing"
)

const torr = 101325.0 / 760 // Pa; REFERENCES.md §1b (exact ratio)

func near(got, want, rel float64) bool {
	return math.Abs(got-want) <= rel*math.Abs(want)
}

// logSpaced returns n pressures evenly spaced in log from lo to hi.
func logSpaced(lo, hi float64, n int) []float64 {
	out := make([]float64, n)
	for i := range out {
		out[i] = lo * math.Pow(hi/lo, float64(i)/float64(n-1))
	}
	return out
}

func mustFit(t *testing.T, model string, pts []Point, opt FitOptions) *Calibration {
	t.Helper()
	c, err := Fit(model, pts, opt)
	if err != nil {
		t.Fatalf("Fit(%s): %v", model, err)
	}
	return c
}

func mustApply(t *testing.T, c *Calibration, raw float64) float64 {
	t.Helper()
	p, err := c.Apply(raw)
	if err != nil {
		t.Fatalf("Apply(%g): %v", raw, err)
	}
	return p
}

// An invented example (REFERENCES.md §5b; demo numbers, not a reference) of
// the heat-loss form S = a·p/(1 + p/p_t) with a = 0.5 mW/Pa, p_t = 100 Pa:
// exact points from it must give its parameters back.
func TestFitHeatLossRecoversPublishedModel(t *testing.T) {
	truth := HeatLoss{S0: 0, A: 0.5, Pt: 100}
	var pts []Point
	for _, p := range logSpaced(0.1, 1e4, 12) {
		pts = append(pts, Point{Raw: truth.Signal(p), Reference: p})
	}
	c := mustFit(t, "pirani", pts, FitOptions{})
	got := c.Parameters
	if !near(got["a_per_pa"], 0.5, 1e-6) || !near(got["pt_pa"], 100, 1e-6) || math.Abs(got["s0"]) > 1e-6 {
		t.Fatalf("parameters %v, want a=0.5 p_t=100 s0=0", got)
	}
	// By hand: S(10 Pa) = 0.5·10/(1 + 0.1) = 4.545454545 mW inverts to 10 Pa;
	// S = 25 mW, half the saturation a·p_t = 50 mW, is p_t = 100 Pa.
	if p := mustApply(t, c, 4.545454545); !near(p, 10, 1e-6) {
		t.Errorf("Apply(4.5455 mW) = %g Pa, want 10", p)
	}
	if p := mustApply(t, c, 25); !near(p, 100, 1e-6) {
		t.Errorf("Apply(25 mW) = %g Pa, want 100", p)
	}
}

// Synthetic data (demo parameters, not a published gauge) with seeded noise
// of 0.5 % in the reference: the fit must land near the truth.
func TestFitHeatLossRecoversNoisyParameters(t *testing.T) {
	truth := HeatLoss{S0: 0.35, A: 0.021, Pt: 180}
	rng := rand.New(rand.NewPCG(1, 2))
	var pts []Point
	for _, p := range logSpaced(0.05, 2e4, 25) {
		pts = append(pts, Point{Raw: truth.Signal(p), Reference: p * (1 + 0.005*rng.NormFloat64())})
	}
	rng.Shuffle(len(pts), func(i, j int) { pts[i], pts[j] = pts[j], pts[i] }) // any order
	c := mustFit(t, ModelHeatLoss, pts, FitOptions{})
	g := c.Parameters
	if !near(g["s0"], 0.35, 1e-3) || !near(g["a_per_pa"], 0.021, 0.02) || !near(g["pt_pa"], 180, 0.05) {
		t.Errorf("parameters %v, want s0=0.35 a=0.021 p_t=180", g)
	}
	if c.Fit.Scatter < 0.002 || c.Fit.Scatter > 0.01 {
		t.Errorf("scatter %g, want about the 0.005 noise", c.Fit.Scatter)
	}
}

// Log-linear fits recover the invented examples of REFERENCES.md §7a
// (generic form U = c + d·log10(p/unit); slopes and offsets are ours), by
// hand: A, 0.8 V/decade with 4.0 V at 1 mbar: 5.6 V → 10^((5.6 − 4)/0.8) =
// 100 mbar = 1e4 Pa; B, 0.5 V/decade with 5.0 V at 1 Pa: 3.5 V →
// 10^((3.5 − 5)/0.5) = 1e-3 Pa.
func TestFitLogLinearInventedOutputs(t *testing.T) {
	for _, tc := range []struct {
		name                    string
		perDecade, atUnit, unit float64
		raw, want               float64
	}{
		{"A 0.8V/decade mbar", 0.8, 4, 100, 5.6, 1e4},
		{"B 0.5V/decade Pa", 0.5, 5, 1, 3.5, 1e-3},
	} {
		t.Run(tc.name, func(t *testing.T) {
			var pts []Point
			for u := 1.0; u <= 9; u += 0.5 {
				pts = append(pts, Point{Raw: u, Reference: tc.unit * math.Pow(10, (u-tc.atUnit)/tc.perDecade)})
			}
			c := mustFit(t, ModelLogLinear, pts, FitOptions{})
			if got := mustApply(t, c, tc.raw); !near(got, tc.want, 1e-6) {
				t.Errorf("Apply(%g) = %g Pa, want %g", tc.raw, got, tc.want)
			}
			if got := c.Parameters["raw_per_decade"]; !near(got, tc.perDecade, 1e-9) {
				t.Errorf("raw_per_decade = %g, want %g", got, tc.perDecade)
			}
		})
	}
}

// Linear outputs p = (U/10 V)·p_FS (REFERENCES.md §7a / §6a), by hand: an
// invented 0–10 V over 1000 mbar, 2.5 V → 250 mbar; 6.0 V on a 10 Torr full
// scale → 6 Torr = 6 × 101325/760 Pa = 799.934 Pa.
func TestFitLinearPublishedOutputs(t *testing.T) {
	for _, tc := range []struct {
		fs, raw, want float64
	}{{1000 * 100, 2.5, 250 * 100}, {10 * torr, 6.0, 799.934}} {
		var pts []Point
		for _, u := range []float64{0.5, 1, 3, 7, 9.5} {
			pts = append(pts, Point{Raw: u, Reference: u / 10 * tc.fs})
		}
		c := mustFit(t, ModelLinear, pts, FitOptions{})
		if got := mustApply(t, c, tc.raw); !near(got, tc.want, 1e-6) {
			t.Errorf("FS %g Pa: Apply(%g) = %g, want %g", tc.fs, tc.raw, got, tc.want)
		}
	}
}

// A cubic in log space (synthetic) is recovered by the poly model.
func TestFitPolyRecoversCubic(t *testing.T) {
	f := func(x float64) float64 { return -2 + 1.1*x + 0.05*x*x + 0.004*x*x*x } // log10 p
	rng := rand.New(rand.NewPCG(3, 4))
	var pts []Point
	for x := 0.0; x <= 10; x += 0.5 {
		pts = append(pts, Point{Raw: x, Reference: math.Pow(10, f(x)) * (1 + 0.002*rng.NormFloat64())})
	}
	c := mustFit(t, ModelPoly, pts, FitOptions{Degree: 3})
	for _, x := range []float64{0.25, 5.25, 9.75} {
		if got, want := mustApply(t, c, x), math.Pow(10, f(x)); !near(got, want, 0.004) {
			t.Errorf("Apply(%g) = %g, want %g", x, got, want)
		}
	}
	if c.Fit.Max > 0.01 {
		t.Errorf("max relative residual %g with 0.2 %% noise", c.Fit.Max)
	}
}

func TestFitErrorsNameThePoints(t *testing.T) {
	good := []Point{{1.0, 1, 2}, {1.5, 10, 3}, {2.0, 100, 4}, {2.31, 500, 5}, {2.29, 800, 6}, {2.6, 1000, 7}}
	for _, tc := range []struct {
		name, model string
		pts         []Point
		want        []string
	}{
		{"reversal", ModelPCHIP, good, []string{"points 4 (line 5) and 5 (line 6)", "raw 2.31 then 2.29", "increase"}},
		{"too few", ModelHeatLoss, good[:2], []string{"at least 3 points, got 2"}},
		{"zero reference", ModelLinear, []Point{{1, 0, 9}, {2, 5, 10}}, []string{"point 1 (line 9)", "above zero"}},
		{"falling heat-loss", ModelHeatLoss, []Point{{3, 1, 0}, {2, 10, 0}, {1, 100, 0}}, []string{"needs raw to increase"}},
		{"unknown model", "spline", good, []string{`unknown model "spline"`, "pchip"}},
	} {
		t.Run(tc.name, func(t *testing.T) {
			_, err := Fit(tc.model, tc.pts, FitOptions{})
			if err == nil {
				t.Fatal("Fit succeeded; want an error")
			}
			for _, w := range tc.want {
				if !strings.Contains(err.Error(), w) {
					t.Errorf("error %q does not contain %q", err, w)
				}
			}
		})
	}
}

// A falling signal (raw drops as pressure rises) is fine for the models that allow it.
func TestFitFallingSignal(t *testing.T) {
	var pts []Point
	for _, p := range logSpaced(1, 1e4, 9) {
		pts = append(pts, Point{Raw: 10 - math.Log10(p), Reference: p})
	}
	for _, m := range []string{ModelPCHIP, ModelLogLinear, ModelPoly} {
		c := mustFit(t, m, pts, FitOptions{})
		if got := mustApply(t, c, 8.5); !near(got, math.Pow(10, 1.5), 1e-3) {
			t.Errorf("%s: Apply(8.5) = %g, want 31.62", m, got)
		}
		if _, err := c.Apply(11); !errors.Is(err, ErrBelowRange) {
			t.Errorf("%s: Apply(11) error %v, want ErrBelowRange (a high raw is a low pressure)", m, err)
		}
	}
}
