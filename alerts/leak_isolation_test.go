package alerts

import (
	"math"
	"math/rand/v2"
	"strings"
	"testing"
	"time"

	"holdfast/calib"
)

// pumpedThenIsolated returns 1 Hz samples of a chamber pumped (flat at p0
// with Gaussian noise sigma) until tc, then isolated with a constant leak:
// the pressure rises at rate a from tc on.
func pumpedThenIsolated(n int, tc, p0, a, sigma float64, seed uint64) (t, p []float64) {
	rng := rand.New(rand.NewPCG(seed, 1))
	for i := range n {
		ti := float64(i)
		v := p0 + sigma*rng.NormFloat64()
		if ti > tc {
			v += a * (ti - tc)
		}
		t, p = append(t, ti), append(p, v)
	}
	return t, p
}

// A rise watch on a window that holds the valve closing must not fit the
// pumped part: it says inconclusive until the isolated part fills 0.8 of the
// window, then finds the leak. Hand calculation: Q = 6e-5 Pa·m³/s in
// V = 0.03 m³ rises at a = Q/V = 2e-3 Pa/s (REFERENCES.md §3, Q = V·dp/dt);
// the pumped chamber sits at 3e-3 Pa with 1e-4 Pa of noise. A fit across
// the knee two minutes after closing would see about 2 min of rise in a
// 5 min window and give roughly half the slope (the failure this guards
// against).
func TestRiseWatchFitsOnlyAfterIsolation(t *testing.T) {
	const q, v, tc = 6e-5, 0.03, 300.0
	ts, ps := pumpedThenIsolated(900, tc, 3e-3, q/v, 1e-4, 3)
	rw := &RiseWatch{Gauge: "g", Window: 5 * time.Minute, Every: 10 * time.Second, MaxLeak: 1e-6, Volume: v, Always: true}
	t0 := time.Date(2031, 1, 1, 0, 0, 0, 0, time.UTC)
	var at2min, at5min RiseResult
	for i := range ts {
		rw.Observe("g", calib.Sample{At: t0.Add(time.Duration(ts[i] * float64(time.Second))), Value: ps[i], Quality: calib.QualityOK}, false)
		switch ts[i] {
		case tc + 120:
			at2min = rw.Last
		case tc + 300:
			at5min = rw.Last
		}
	}
	if at2min.Classification != Inconclusive || !strings.Contains(at2min.Reason, "isolation") {
		t.Errorf("2 min after closing: %s (%s); want inconclusive, waiting for the isolated record", at2min.Classification, at2min.Reason)
	}
	got, u := at5min.LeakRate, at5min.LeakRateExpanded
	if at5min.Classification != LeakDominated || math.Abs(got-q) > u {
		t.Errorf("5 min after closing: %s, Q = %.4g ± %.2g (k = 2); want leak-dominated with %.3g inside the interval (%s)",
			at5min.Classification, got, u, q, at5min.Reason)
	}
}

// IsolationOnset finds the knee of pumped-then-isolated data near the
// closing time and none in records that are one rise throughout: a straight
// leak rise, an outgassing rise that bends down (its dp/dt falls, the
// opposite of an isolation), and flat pumped noise.
func TestIsolationOnset(t *testing.T) {
	ts, ps := pumpedThenIsolated(600, 250, 3e-3, 2e-3, 1e-4, 4)
	o, ok := IsolationOnset(ts, ps)
	if !ok || math.Abs(o.At-250) > 5 || math.Abs(o.After-2e-3) > 1e-4 {
		t.Errorf("pumped then isolated at 250 s: onset %+v, %v; want at 250 ± 5 s with dp/dt 2e-3 Pa/s after", o, ok)
	}
	line, _ := pumpedThenIsolated(600, -1, 3e-3, 2e-3, 1e-4, 5)
	flat, _ := pumpedThenIsolated(600, 1e9, 3e-3, 2e-3, 1e-4, 6)
	bend := make([]float64, len(ts))
	for i, ti := range ts {
		bend[i] = 1e-2 + 0.5*(1-math.Exp(-ti/150)) + 1e-4*math.Sin(float64(i))
	}
	for name, p := range map[string][]float64{"leak line": line, "flat": flat, "outgassing bend": bend} {
		if o, ok := IsolationOnset(ts, p); ok {
			t.Errorf("%s: found an onset %+v; want none", name, o)
		}
	}
}
