package sim

import (
	"math"
	"testing"
	"time"
)

// A constant-speed pump with no gas load: p(t) = p0·exp(−S·t/V).
// Source: REFERENCES.md §4 "pump-down (constant S, no gas load)",
// t = (V/S)·ln(p0/p) (homo-deus.com lab "pump-speed";
// semiconductor-tools.pages.dev pumpdown-log-analyzer), C2.
func TestPumpDownConstantSpeedTenDecades(t *testing.T) {
	const vol, speed, p0 = 0.100, 0.010, Atmosphere
	for _, stepwise := range []bool{false, true} {
		ch, clk := newTestChamber(t, Config{Volume: vol, Rough: Pump{Speed: speed}})
		for k := 1; k <= 10; k++ {
			d := seconds(vol / speed * math.Log(math.Pow(10, float64(k))))
			if !stepwise && k < 10 {
				continue // one call straight to ten decades
			}
			got := stateAt(ch, clk, d).Pressure
			want := p0 * math.Exp(-speed*d.Seconds()/vol)
			if e := relErr(got, want); e > 1e-9 {
				t.Errorf("stepwise=%v, %d decades (t = %s): p = %.12g Pa, want %.12g (rel err %.2g)", stepwise, k, d, got, want, e)
			}
		}
	}
}

// REFERENCES.md §4a worked checks: V = 100 L, S_eff = 10 L/s, 1013.25 mbar
// reaches 1 mbar in 69.209 s and 0.1 mbar in 92.235 s (±0.001 s). The time
// error of the simulated curve at the published time is ln(p/p_target)·V/S.
func TestPumpDownTimesPublished(t *testing.T) {
	const vol, speed = 0.100, 0.010 // m³, m³/s
	for _, c := range []struct {
		at     float64 // s, published
		target float64 // Pa
	}{
		{69.209, 100}, // 1 mbar
		{92.235, 10},  // 0.1 mbar
	} {
		ch, clk := newTestChamber(t, Config{Volume: vol, StartPressure: 101325, Rough: Pump{Speed: speed}})
		p := stateAt(ch, clk, seconds(c.at)).Pressure
		if dt := math.Log(p/c.target) * vol / speed; math.Abs(dt) > 0.001 {
			t.Errorf("at %.3f s: p = %.6g Pa; it reaches %g Pa %.4f s from the published time, want within 0.001 s", c.at, p, c.target, dt)
		}
	}
}

// With a gas load Q and a pump base pressure u, p − u − Q/S decays as
// exp(−S·t/V). Source: REFERENCES.md §4 "with gas load Q and pump base
// pressure: use (p − p_ult − Q/S) in place of p" (pump maker's knowledge
// page, brand withheld), C2.
func TestPumpDownWithLoadAndBasePressure(t *testing.T) {
	const vol, speed, ult, leak, p0 = 0.030, 5.0 / 3600, 0.5, 2e-4, 2000.0
	ch, clk := newTestChamber(t, Config{Volume: vol, StartPressure: p0, Rough: Pump{Speed: speed, Ultimate: ult}, Leak: leak})
	floor := ult + leak/speed
	for _, s := range []float64{1, 10, 60, 150, 300, 600} {
		got := stateAt(ch, clk, seconds(s)).Pressure
		want := floor + (p0-floor)*math.Exp(-speed*s/vol)
		if e := relErr(got, want); e > 1e-9 {
			t.Errorf("t = %g s: p = %.12g Pa, want %.12g (rel err %.2g)", s, got, want, e)
		}
	}
}

// Ultimate pressure p = Q/S_eff. Source: REFERENCES.md §4a worked checks:
// S = 500 L/s through C = 100 L/s gives S_eff = 83.333 L/s (homo-deus.com
// example, 1/S_eff = 1/S + 1/C), and Q = 1e-5 mbar·L/s on it gives
// 1.2e-7 mbar (rel 1e-9).
func TestUltimatePressureIsLoadOverSpeed(t *testing.T) {
	const pumpS, cond = 0.500, 0.100
	sEff := 1 / (1/pumpS + 1/cond)
	if math.Abs(sEff*1000-83.333) > 0.001 {
		t.Fatalf("S_eff = %.4f L/s, want 83.333", sEff*1000)
	}
	q := 1e-5 * 0.1 // 1e-5 mbar·L/s in Pa·m³/s (REFERENCES.md §3a)
	ch, clk := newTestChamber(t, Config{Volume: 0.1, Rough: Pump{Speed: sEff}, Leak: q})
	got := stateAt(ch, clk, time.Hour).Pressure
	if want := 1.2e-7 * 100; relErr(got, want) > 1e-9 {
		t.Errorf("ultimate pressure %.12g Pa, want %.12g Pa (1.2e-7 mbar)", got, want)
	}
}

// A sealed chamber with a constant leak rises at exactly Q/V. Source:
// REFERENCES.md §3 Q = V·dp/dt (EN 13184 pressure-rise method) and the §3b
// worked check: V = 100 L rising from 1.0e-2 to 5.0e-2 mbar in 600 s is
// Q = 6.6667e-4 Pa·m³/s.
func TestSealedChamberRisesAtLeakOverVolume(t *testing.T) {
	const vol = 0.100
	q := vol * (5 - 1) / 600.0 // Pa·m³/s
	if relErr(q, 6.6667e-4) > 1e-4 {
		t.Fatalf("Q = %g Pa·m³/s, want 6.6667e-4 (published)", q)
	}
	cfg := Config{Volume: vol, StartPressure: 1, Rough: Pump{Speed: 0.01}, Leak: q, Isolated: true}
	ch, clk := newTestChamber(t, cfg)
	for _, s := range []float64{0.5, 60, 333, 600} {
		got := stateAt(ch, clk, seconds(s)).Pressure
		if want := 1 + q*s/vol; relErr(got, want) > 1e-9 {
			t.Errorf("sealed, t = %g s: p = %.12g Pa, want %.12g", s, got, want)
		}
	}

	// The same rise when the valve closes mid-pump-down, by event and by call.
	cfg.Isolated = false
	cfg.StartPressure = 0
	cfg.Events = []Event{{After: 100 * time.Second, Action: ActIsolate}}
	byEvent, clkE := newTestChamber(t, cfg)
	cfg.Events = nil
	byCall, clkC := newTestChamber(t, cfg)
	p100 := stateAt(byCall, clkC, 100*time.Second).Pressure
	byCall.Isolate(true)
	for _, s := range []float64{100, 400} {
		want := p100 + q*(s-100)/vol
		for name, got := range map[string]float64{
			"event": stateAt(byEvent, clkE, seconds(s)).Pressure,
			"call":  stateAt(byCall, clkC, seconds(s)).Pressure,
		} {
			if relErr(got, want) > 1e-9 {
				t.Errorf("isolated by %s at 100 s, t = %g s: p = %.12g Pa, want %.12g", name, s, got, want)
			}
		}
	}
}

// The exponential step is exact for piecewise-constant loads, so one call a
// day ahead and thousands of small calls agree, and a pump-down never goes
// negative or up. A property of the method (common practice), no published
// value.
func TestStepIndependentOfCallSpacing(t *testing.T) {
	cfg := Config{Volume: 0.030, Rough: Pump{Speed: 5.0 / 3600, Ultimate: 0.5},
		High: Pump{Speed: 0.060, Ultimate: 1e-7}, Crossover: 5, Leak: 1e-8}
	day := 24 * time.Hour
	once, clkO := newTestChamber(t, cfg)
	want := stateAt(once, clkO, day).Pressure
	many, clkM := newTestChamber(t, cfg)
	prev := Atmosphere
	for d := time.Duration(0); d <= day; d += 7*time.Second + 300*time.Millisecond {
		p := stateAt(many, clkM, d).Pressure
		if !(p >= 0) || p > prev {
			t.Fatalf("t = %s: p = %g Pa after %g Pa; want non-negative and non-increasing", d, p, prev)
		}
		prev = p
	}
	got := stateAt(many, clkM, day).Pressure
	if relErr(got, want) > 1e-6 {
		t.Errorf("after a day in small steps p = %.10g Pa, in one step %.10g Pa", got, want)
	}
	if floor := cfg.High.Ultimate + cfg.Leak/cfg.High.Speed; relErr(want, floor) > 1e-9 {
		t.Errorf("base pressure %.10g Pa, want u + Q/S = %.10g Pa", want, floor)
	}
}

// With a time-varying outgassing load the sub-steps are sized from the load,
// so the spacing of calls still matters little (common practice: step-size
// independence as a check of an integrator).
func TestStepWithOutgassingIndependentOfCallSpacing(t *testing.T) {
	cfg := Demo()
	end := 6 * time.Hour
	once, clkO := newTestChamber(t, cfg)
	many, clkM := newTestChamber(t, cfg)
	checks := []time.Duration{30 * time.Minute, 80 * time.Minute, 3 * time.Hour, end}
	for d := time.Duration(0); d <= end; d += 10 * time.Second {
		got := stateAt(many, clkM, d)
		if len(checks) == 0 || d != checks[0] {
			continue
		}
		checks = checks[1:]
		want := stateAt(once, clkO, d)
		if e := relErr(got.Pressure, want.Pressure); e > 1e-5 {
			t.Errorf("t = %s: p = %.8g Pa in 10 s calls, %.8g Pa in a few large ones (rel %.2g)", d, got.Pressure, want.Pressure, e)
		}
	}
	if len(checks) > 0 {
		t.Fatalf("checkpoints %v never reached", checks)
	}
}
