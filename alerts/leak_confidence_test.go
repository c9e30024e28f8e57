package alerts

import (
	"math"
	"math/rand/v2"
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
