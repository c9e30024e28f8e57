package sim

import (
	"math"
	"testing"
	"time"
)

// The wall follows the heater as a first-order lag: T(τ) = T_set − (T_set −
// T0)/e after one time constant (the 63.2 % step response of a first-order
// system; common practice), and relaxes to ambient the same way.
func TestWallFirstOrderLag(t *testing.T) {
	const amb, set = 22.0, 150.0
	tau := 20 * time.Minute
	ch, clk := newTestChamber(t, Config{Volume: 0.03, AmbientC: amb, WallTau: tau,
		Events: []Event{{After: 0, Action: ActBake, Value: set}, {After: 5 * tau, Action: ActBake, Value: 0}}})
	checks := []struct {
		at   time.Duration
		want float64
	}{
		{tau, set - (set-amb)/math.E},
		{2 * tau, set - (set-amb)*math.Exp(-2)},
		{5 * tau, set - (set-amb)*math.Exp(-5)},
		{6 * tau, amb + (set-(set-amb)*math.Exp(-5)-amb)/math.E}, // cooling: one τ after heater off
	}
	for _, c := range checks {
		if got := stateAt(ch, clk, c.at).WallC; relErr(got, c.want) > 1e-12 {
			t.Errorf("t = %s: wall %.12g °C, want %.12g", c.at, got, c.want)
		}
	}
	// The default lag is 20 min, and a setpoint below ambient means heater off.
	def, clkD := newTestChamber(t, Config{Volume: 0.03, AmbientC: amb, Events: []Event{{Action: ActBake, Value: set}}})
	if got, want := stateAt(def, clkD, 20*time.Minute).WallC, set-(set-amb)/math.E; relErr(got, want) > 1e-12 {
		t.Errorf("default lag: wall %.12g °C after 20 min, want %.12g", got, want)
	}
	if err := def.SetBake(-10); err != nil {
		t.Fatal(err)
	}
	if got, want := stateAt(def, clkD, 1000*time.Hour).WallC, amb; relErr(got, want) > 1e-12 {
		t.Errorf("heater below ambient: wall settles at %.12g °C, want ambient %g", got, want)
	}
}

// A sealed chamber collects the outgassing integral: with q = Q1h·(3600 s/t)^n,
// p(t2) − p(t1) = (Q1h/V)·∫q dt, which is Q1h·3600·ln(t2/t1)/V for n = 1 and
// 2·Q1h·60·(√t2 − √t1)/V for n = 0.5. The laws: REFERENCES.md §3 "unbaked-
// system outgassing law, q ∝ t⁻¹ (metals), ≈ t⁻⁰·⁵ (elastomers)" (O'Hanlon,
// from memory); the integrals are calculus.
func TestSealedOutgassingIntegral(t *testing.T) {
	const vol, q1h, p0 = 0.030, 3e-5, 1e-3
	for _, c := range []struct {
		n        float64
		integral func(t1, t2 float64) float64
	}{
		{1, func(t1, t2 float64) float64 { return q1h * 3600 * math.Log(t2/t1) }},
		{0.5, func(t1, t2 float64) float64 { return q1h * 60 * 2 * (math.Sqrt(t2) - math.Sqrt(t1)) }},
	} {
		ch, clk := newTestChamber(t, Config{Volume: vol, StartPressure: p0, AmbientC: 22, Isolated: true,
			Outgassing: q1h, OutgassingExp: c.n})
		t1, t2 := 120.0, 36000.0
		p1 := stateAt(ch, clk, seconds(t1)).Pressure
		st := stateAt(ch, clk, seconds(t2))
		want := c.integral(t1, t2) / vol
		if got := st.Pressure - p1; relErr(got, want) > 1e-4 {
			t.Errorf("n = %g: rise from %g s to %g s is %.8g Pa, want %.8g", c.n, t1, t2, got, want)
		}
		if want := q1h * math.Pow(3600/t2, c.n); relErr(st.Outgassing, want) > 1e-12 {
			t.Errorf("n = %g: outgassing at %g s is %g Pa·m³/s, want %g", c.n, t2, st.Outgassing, want)
		}
	}
}

// Leak or outgassing: with the valve closed a real leak rises linearly while
// outgassing bends over, its interval rates falling. Source: REFERENCES.md
// §3 "leak vs outgassing" (leakdetection-technology.com "The pressure
// increase test"; vactech.pages.dev M02 lesson 3), C2.
func TestSealedRiseLeakLinearOutgassingBends(t *testing.T) {
	rates := func(cfg Config) []float64 {
		ch, clk := newTestChamber(t, cfg)
		var out []float64
		prev := stateAt(ch, clk, time.Hour).Pressure
		for i := 1; i <= 4; i++ {
			p := stateAt(ch, clk, time.Hour+time.Duration(i)*10*time.Minute).Pressure
			out = append(out, (p-prev)/600)
			prev = p
		}
		return out
	}
	base := Config{Volume: 0.03, StartPressure: 1e-3, AmbientC: 22, Isolated: true}
	leak, gas := base, base
	leak.Leak = 1e-6
	gas.Outgassing = 1e-6
	for i, r := range rates(leak) {
		if relErr(r, 1e-6/0.03) > 1e-9 {
			t.Errorf("leak: interval %d rate %g Pa/s, want Q/V = %g", i, r, 1e-6/0.03)
		}
	}
	g := rates(gas)
	for i := 1; i < len(g); i++ {
		if !(g[i] < g[i-1]) {
			t.Errorf("outgassing: interval rates %v, want each below the one before", g)
		}
	}
}

// A hot wall outgasses faster and also runs its outgassing clock faster: the
// model's stated assumption (outgassing doubles per 15 K, from memory; the
// clock runs at the same factor, a modelling choice), so after the wall
// jumps to ambient + 30 K the load is 4× and the sealed rise is
// Q1h·3600·ln(age2/age1)/V with age advancing 4 s per second.
func TestHotWallOutgassing(t *testing.T) {
	const vol, q1h, amb = 0.03, 1e-6, 22.0
	ch, clk := newTestChamber(t, Config{Volume: vol, StartPressure: 1e-3, AmbientC: amb, Isolated: true,
		Outgassing: q1h, WallTau: time.Millisecond,
		Events: []Event{{After: time.Hour, Action: ActBake, Value: amb + 30}}})
	if f := thermalFactor(amb+30, amb); relErr(f, 4) > 1e-12 {
		t.Fatalf("thermal factor at +30 K = %g, want 4", f)
	}
	s1 := stateAt(ch, clk, time.Hour+time.Second)
	if want := 4 * q1h * 3600 / (3600 + 4*1.0); relErr(s1.Outgassing, want) > 1e-3 {
		t.Errorf("1 s into the hot wall: outgassing %g, want %g", s1.Outgassing, want)
	}
	s2 := stateAt(ch, clk, 2*time.Hour)
	age1, age2 := 3600+4*1.0, 3600+4*3601.0
	if got, want := s2.Pressure-s1.Pressure, q1h*3600*math.Log(age2/age1)/vol; relErr(got, want) > 1e-3 {
		t.Errorf("hot-wall rise %.8g Pa, want %.8g", got, want)
	}
}

// A bleed adds its throughput to the load: p = (Q_leak + Q_bleed)/S at the
// ultimate (REFERENCES.md §4 "ultimate pressure p = Q/S_eff").
func TestBleedAddsToLoad(t *testing.T) {
	const s, leak, bleed = 0.05, 1e-6, 4e-6
	ch, clk := newTestChamber(t, Config{Volume: 0.03, Rough: Pump{Speed: s}, Leak: leak,
		Events: []Event{{After: time.Hour, Action: ActBleed, Value: bleed}}})
	if got := stateAt(ch, clk, time.Hour).Pressure; relErr(got, leak/s) > 1e-9 {
		t.Errorf("before the bleed: %.10g Pa, want %.10g", got, leak/s)
	}
	st := stateAt(ch, clk, 2*time.Hour)
	if want := (leak + bleed) / s; relErr(st.Pressure, want) > 1e-9 || st.Bleed != bleed {
		t.Errorf("with the bleed: %.10g Pa (bleed %g), want %.10g Pa (bleed %g)", st.Pressure, st.Bleed, want, bleed)
	}
}
