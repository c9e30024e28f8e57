package alerts

import (
	"math"
	"math/rand/v2"
	"slices"
	"strings"
	"testing"
)

// An outgassing rise states the leak only as an upper bound: the total rate
// of rise at the end of the record. Hand calculation for p = p0 +
// b·(1 − e^(−t/τ)) with b = 1 Pa, τ = 100 s, T = 600 s, V = 0.03 m³:
// dp/dt(T) = (b/τ)·e^(−T/τ) = 0.01 × e^(−6) = 2.48e-5 Pa/s, so the bound is
// about V × 2.48e-5 = 7.4e-7 Pa·m³/s (plus 2u); the true leak, 0, is below.
func TestOutgassingGivesAnUpperBound(t *testing.T) {
	rng := rand.New(rand.NewPCG(11, 2))
	var ts, ps []float64
	for i := range 601 {
		ti := float64(i)
		ts = append(ts, ti)
		ps = append(ps, 1e-2+1*(1-math.Exp(-ti/100))+1e-4*rng.NormFloat64())
	}
	res, err := AnalyzeRise(ts, ps, 0.03, RiseOptions{})
	if err != nil {
		t.Fatal(err)
	}
	if res.Classification != OutgassingDominated || !res.UpperBoundOnly || !strings.Contains(res.Reason, "at most") {
		t.Fatalf("%s, bound only %v: %s; want outgassing-dominated stated as an upper bound", res.Classification, res.UpperBoundOnly, res.Reason)
	}
	if ub := res.LeakUpperBound; ub < 0.5*7.4e-7 || ub > 2*7.4e-7 {
		t.Errorf("upper bound %.3g Pa·m³/s; want about 7.4e-7 (V·dp/dt at the end)", ub)
	}
}

// The leak rate's uncertainty takes in the gauge's scale and the volume, not
// the fit's scatter alone: a clean straight rise read by a gauge whose scale
// is known to 1 % in a volume known to 2.5 % is a leak known to about 2.7 %.
// Hand calculation (JCGM 100:2008, §5.1.6, Q = V·a): a = 1e-5 Pa/s,
// V = 0.03 m³, Q = 3e-7 Pa·m³/s; u_rel = √(0.01² + 0.025²) = 0.026926, so
// u(Q) = 8.078e-9 and U = 2u = 1.6155e-8 Pa·m³/s (the fit's own part, from
// ±1e-9 Pa of noise over 300 s, is near 2e-14 and does not count). The
// upper bound, the rate at the end plus 2u, is 3.1616e-7 Pa·m³/s.
func TestLeakUncertaintyTakesInScaleAndVolume(t *testing.T) {
	var ts, ps []float64
	for i := range 301 {
		noise := 1e-9
		if i%2 == 1 {
			noise = -noise
		}
		ts = append(ts, float64(i))
		ps = append(ps, 1e-3+1e-5*float64(i)+noise)
	}
	fitOnly, err := AnalyzeRise(ts, ps, 0.03, RiseOptions{})
	if err != nil {
		t.Fatal(err)
	}
	res, err := AnalyzeRise(ts, ps, 0.03, RiseOptions{ScaleUncertainty: 0.01, VolumeUncertainty: 0.025})
	if err != nil {
		t.Fatal(err)
	}
	if res.Classification != LeakDominated || math.Abs(res.LeakRate-3e-7) > 1e-3*3e-7 {
		t.Fatalf("%s, Q = %.4g; want leak-dominated, 3e-7 Pa·m³/s", res.Classification, res.LeakRate)
	}
	for _, c := range []struct {
		name      string
		got, want float64
	}{
		{"u(Q)", res.LeakRateUncertainty, 8.078e-9},
		{"U(Q)", res.LeakRateExpanded, 1.6155e-8},
		{"upper bound", res.LeakUpperBound, 3.1616e-7},
	} {
		if math.Abs(c.got-c.want) > 2e-3*c.want {
			t.Errorf("%s = %.5g Pa·m³/s, want %.5g", c.name, c.got, c.want)
		}
	}
	if fitOnly.LeakRateUncertainty > 1e-3*res.LeakRateUncertainty {
		t.Errorf("the fit alone gives u(Q) = %.3g: the record is not as clean as the test needs", fitOnly.LeakRateUncertainty)
	}
	if !slices.ContainsFunc(res.Notes, func(n string) bool { return strings.Contains(n, "outgassing that stays steady") }) {
		t.Errorf("a straight rise's notes %q do not say that steady outgassing is in the leak term", res.Notes)
	}
	if res.ScaleUncertainty != 0.01 || res.VolumeUncertainty != 0.025 {
		t.Errorf("result says scale %g, volume %g: the components taken in are not stated", res.ScaleUncertainty, res.VolumeUncertainty)
	}
	for _, bad := range []RiseOptions{{ScaleUncertainty: 1.5}, {VolumeUncertainty: -0.1}, {ScaleUncertainty: math.NaN()}} {
		if _, err := AnalyzeRise(ts, ps, 0.03, bad); err == nil || !strings.Contains(err.Error(), "relative standard uncertainty") {
			t.Errorf("options %+v: %v, want refused", bad, err)
		}
	}
}
