package daemon

import (
	"errors"
	"math"
	"math/rand/v2"
	"strings"
	"testing"
	"time"
)

// series samples f at 1 s steps over [start, start+n s).
func series(n int, start float64, f func(t float64) float64) (t, y []float64) {
	for i := range n {
		t = append(t, float64(i))
		y = append(y, f(start+float64(i)))
	}
	return t, y
}

// An exponential settle, y = 100 + 10·e^(−t/τ) (the first-order response,
// common practice for a gauge or a column coming to equilibrium): the
// least-squares slopes of the two half windows differ by exactly
// e^(−w/2τ), so τ comes back to rounding, and waiting the time the check
// suggests brings the slope down by exactly drift/limit.
func TestSteadinessSettlingTimeConstant(t *testing.T) {
	const tau, w, limit = 120.0, 60.0, 0.005
	f := func(x float64) float64 { return 100 + 10*math.Exp(-x/tau) }
	ts, ys := series(60, 0, f)
	s := analyse(ts, ys, w)
	if got := s.tau.Seconds(); math.Abs(got-tau)/tau > 1e-6 {
		t.Errorf("tau = %g s; want %g s", got, tau)
	}
	err := s.check(limit, time.Minute)
	if !errors.As(err, new(refusedError)) || !strings.Contains(err.Error(), "still drifting") || !strings.Contains(err.Error(), "wait about") {
		t.Fatalf("check = %v; want a refusal saying how long to wait", err)
	}
	wait := float64(s.tau) * math.Log(math.Abs(s.drift)/limit) / 1e9
	ts, ys = series(60, wait, f)
	later := analyse(ts, ys, w)
	// The slope has fallen by exactly drift/limit; the drift, relative to
	// a mean that fell meanwhile, is within a few percent of the limit.
	if got := math.Abs(later.drift) * later.mean / s.mean; math.Abs(got-limit)/limit > 1e-6 {
		t.Errorf("after waiting %.0f s the slope gives drift %g at the old mean; want the limit %g", wait, got, limit)
	}
	if math.Abs(math.Abs(later.drift)-limit)/limit > 0.1 {
		t.Errorf("after waiting %.0f s the drift is %g; want about the limit %g", wait, later.drift, limit)
	}
}

// A steady linear rise (a leak into an isolated volume, REFERENCES.md §3:
// constant dp/dt) never settles: the check refuses and says so.
func TestSteadinessSteadyRiseIsNotSettling(t *testing.T) {
	ts, ys := series(60, 0, func(x float64) float64 { return 50 + 0.01*x }) // +1.2 % per minute
	s := analyse(ts, ys, 60)
	if s.tau != 0 {
		t.Errorf("tau = %s for a straight line; want 0 (not settling)", s.tau)
	}
	if want := 0.01 * 60 / s.mean; math.Abs(s.drift-want) > 1e-12 {
		t.Errorf("drift = %g; want %g", s.drift, want)
	}
	if err := s.check(0.005, time.Minute); err == nil || !strings.Contains(err.Error(), "not settling") {
		t.Errorf("check = %v; want a refusal saying it is not settling", err)
	}
}

// A steady reading with noise passes, and its mean is the true level
// within the standard error σ/√n.
func TestSteadinessNoise(t *testing.T) {
	r := rand.New(rand.NewPCG(1, 2))
	ts, ys := series(60, 0, func(float64) float64 { return 20 + 0.02*r.NormFloat64() })
	s := analyse(ts, ys, 60)
	if err := s.check(0.005, time.Minute); err != nil {
		t.Errorf("check = %v; want a steady window accepted", err)
	}
	if math.Abs(s.mean-20) > 4*0.02/math.Sqrt(60) {
		t.Errorf("mean %g; want 20 within 4 standard errors", s.mean)
	}
	if math.Abs(s.sd-0.02)/0.02 > 0.3 {
		t.Errorf("sd %g; want about 0.02", s.sd)
	}
	// Heavy noise hides any drift: accepted, with the drift's standard
	// error that of a least-squares slope, σ/√(Σ(t−t̄)²) = σ·√(12/(n(n²−1)))
	// on a uniform grid (common practice).
	ts, ys = series(60, 0, func(float64) float64 { return 20 + 1*r.NormFloat64() })
	noisy := analyse(ts, ys, 60)
	if err := noisy.check(0.005, time.Minute); err != nil {
		t.Errorf("check = %v; want a drift within the noise accepted", err)
	}
	wantSE := noisy.sd * math.Sqrt(12/(60*(60*60-1.0))) * 60 / noisy.mean
	if math.Abs(noisy.driftSE-wantSE) > 1e-12 {
		t.Errorf("drift standard error %g; want %g", noisy.driftSE, wantSE)
	}
	if err := analyse(ts[:3], ys[:3], 60).check(0.005, time.Minute); err == nil || !strings.Contains(err.Error(), "only 3") {
		t.Errorf("check with 3 samples = %v; want too few samples", err)
	}
}

// A drift over the limit is refused only beyond three standard errors: a
// steady noisy gauge whose trend estimate lands 2.5 SE out (which happens
// to about one window in 80 by chance, 1.2 % for a normal variable) gives
// its point; one 3.3 SE out is refused.
func TestDriftMustStandOutThreeSE(t *testing.T) {
	const limit = 0.005
	for _, c := range []struct {
		drift, se float64
		refused   bool
	}{
		{0.01, 0.004, false},   // 2.5 SE
		{-0.01, 0.004, false},  // the sign does not matter
		{0.01, 0.003, true},    // 3.3 SE
		{0.004, 0.0001, false}, // 40 SE but within the limit
	} {
		err := steadiness{n: 60, mean: 20, drift: c.drift, driftSE: c.se}.check(limit, time.Minute)
		if (err != nil) != c.refused {
			t.Errorf("drift %g with SE %g: %v, want refused %v", c.drift, c.se, err, c.refused)
		}
	}
}
