package sim

import (
	"context"
	"errors"
	"math"
	"testing"
	"testing/synctest"
	"time"

	"gonum.org/v1/gonum/stat"

	"holdfast/drivers"
)

// record is one poll of one demo instrument.
type record struct {
	at  time.Duration // simulated, since the start
	r   drivers.Reading
	err error
}

// pollDemo runs the demo at speed 600 for 25 s of (fake) wall time, polling
// every instrument every 10 simulated seconds, as the daemon would.
func pollDemo(t *testing.T) (map[string][]record, map[string]*Instrument) {
	recs := map[string][]record{}
	ins := map[string]*Instrument{}
	synctest.Test(t, func(t *testing.T) {
		clk := NewClock(epoch, 600)
		ch, err := New(Demo(), clk.Now)
		if err != nil {
			t.Fatal(err)
		}
		for _, ic := range DemoInstruments() {
			ins[ic.Name] = mustInstrument(t, ch, ic)
		}
		ctx := context.Background()
		for wall := time.Now(); time.Since(wall) < 25*time.Second; {
			for name, in := range ins {
				r, err := in.Read(ctx)
				recs[name] = append(recs[name], record{clk.Now().Sub(epoch), r, err})
			}
			if err := clk.Sleep(ctx, 10*time.Second); err != nil {
				t.Fatal(err)
			}
		}
	})
	return recs, ins
}

// near returns the first record at or after d.
func near(t *testing.T, recs []record, d time.Duration) record {
	t.Helper()
	for _, r := range recs {
		if r.at >= d {
			return r
		}
	}
	t.Fatalf("no record at or after %s", d)
	return record{}
}

// pressure converts a reading through the instrument's own transfer.
func pressure(t *testing.T, in *Instrument, rec record) float64 {
	t.Helper()
	if rec.err != nil || rec.r.Status != drivers.StatusOK {
		t.Fatalf("%s at %s: %v / %s, want an ok reading", in.Name(), rec.at, rec.err, rec.r.Status)
	}
	p, err := in.Transfer().Apply(rec.r.Raw)
	if err != nil {
		t.Fatalf("%s at %s: %v", in.Name(), rec.at, err)
	}
	return p
}

// ionPressureAt fits a line to the ion gauge's ok readings in [from, to) and
// returns its value at to: the pressure just before whatever happens at to.
func ionPressureAt(t *testing.T, in *Instrument, recs []record, from, to time.Duration) float64 {
	t.Helper()
	var ts, ps []float64
	for _, rec := range recs {
		if rec.at >= from && rec.at < to && rec.err == nil && rec.r.Status == drivers.StatusOK {
			ts, ps = append(ts, rec.at.Seconds()), append(ps, rec.r.Raw)
		}
	}
	if len(ts) < 10 {
		t.Fatalf("%s: only %d ok readings between %s and %s", in.Name(), len(ts), from, to)
	}
	a, b := stat.LinearRegression(ts, ps, nil, false)
	return a + b*to.Seconds()
}

// The demo looks right at speed 600 for 25 s of wall time: a pump-down from
// atmosphere, the bake's pressure bump, a lower base after cooling, the leak,
// and a hold test whose rise matches the load the pumps carried before it and
// the leak the scenario opens (REFERENCES.md §3 Q = V·dp/dt, §4 p = Q/S).
// Invented scenario; the checks are qualitative except the hold test.
func TestDemoLooksRight(t *testing.T) {
	recs, ins := pollDemo(t)
	pir, ion, cdg := ins["chamber-pirani"], ins["chamber-ion"], ins["chamber-cdg"]
	if last := recs["room-tc"][len(recs["room-tc"])-1].at; last < 4*time.Hour {
		t.Fatalf("25 s of wall time reached only %s of simulated time, want over 4 h", last)
	}

	if r := near(t, recs[pir.Name()], 20*time.Second).r; r.Status != drivers.StatusOverRange {
		t.Errorf("Pirani at 20 s: %s, want over-range (saturated near atmosphere)", r.Status)
	}
	prev := math.Inf(1)
	for _, d := range []time.Duration{time.Minute, 2 * time.Minute, 3 * time.Minute, 3*time.Minute + 30*time.Second} {
		p := pressure(t, pir, near(t, recs[pir.Name()], d))
		if !(p < prev) {
			t.Errorf("Pirani at %s: %g Pa after %g Pa, want falling", d, p, prev)
		}
		prev = p
	}
	ionAt := func(d time.Duration) float64 { return pressure(t, ion, near(t, recs[ion.Name()], d)) }
	if p := ionAt(5 * time.Minute); !(p < 1e-2) {
		t.Errorf("ion gauge at 5 min: %g Pa, want below 1e-2 Pa", p)
	}
	preBake, bake, cooled, leaking := ionAt(59*time.Minute), ionAt(80*time.Minute), ionAt(179*time.Minute), ionAt(205*time.Minute)
	if !(bake > 3*preBake) || !(cooled < preBake/10) || !(leaking > 2*cooled) {
		t.Errorf("ion gauge: %g Pa before the bake, %g during, %g cooled, %g leaking; want a bump, a lower base, then a rise",
			preBake, bake, cooled, leaking)
	}

	// Hold test 3:30–3:35. Two physical relations, each between readings
	// of the simulated gauges and the scenario's own inputs (Demo: V = 30 L,
	// a high-vacuum stage of S = 60 L/s with a 1e-7 Pa base, rough stage
	// idle below its 0.5 Pa base; a 1e-6 Pa·m³/s leak from 3:00):
	//
	//  1. Gas-load continuity. Just before the valve closes the chamber is
	//     at the steady state of V·dp/dt = Q − S·(p − p_base), whose time
	//     constant V/S = 0.5 s is far below the 10 s polls, so the load is
	//     Q = S·(p − p_base) (REFERENCES.md §4, ultimate pressure p = Q/S).
	//     Sealed, the same load fills the volume: Q = V·dp/dt (REFERENCES.md
	//     §3, EN 13184). The two must agree. The load changes little in the
	//     5 min: the leak is constant and the outgassing, at most
	//     S·p(3:00) ≈ 3e-7 Pa·m³/s of it (bound 2), falls by under a tenth
	//     (the wall, at most 22 + 128·e⁻³ = 28.4 °C at 3:30, cools another
	//     1.4 K: 2^(−1.4/15) = 0.94; the 1/t clock, past 12 600 s, runs on
	//     5 min at most 1.34× fast: 0.97), under 3 % of Q in all.
	//  2. Bounds from the known leak. The load is the leak plus outgassing,
	//     which is never negative and, with the wall cooling and the clock
	//     running on, falls after the heater is off: so
	//     1e-6 ≤ Q ≤ 1e-6 + S·(p(3:00) − p_base), p(3:00) read just before
	//     the leak opens.
	//
	// The CDG's noise (1e-4 of its 13.3 Pa full scale) is a tenth of the
	// rise, so its fit is looser.
	const vol, speed, base, leak = 0.030, 0.060, 1e-7, 1e-6 // m³, m³/s, Pa, Pa·m³/s: Demo's inputs
	before := ionPressureAt(t, ion, recs[ion.Name()], 205*time.Minute, 210*time.Minute)
	qBefore := speed * (before - base)
	preLeak := speed * (ionPressureAt(t, ion, recs[ion.Name()], 177*time.Minute, 180*time.Minute) - base)
	for _, c := range []struct {
		in       *Instrument
		from, to time.Duration
		tol      float64
	}{
		{cdg, 210*time.Minute + 20*time.Second, 214*time.Minute + 50*time.Second, 0.2},
		{ion, 210*time.Minute + 20*time.Second, 214 * time.Minute, 0.05},
	} {
		var ts, ps []float64
		for _, rec := range recs[c.in.Name()] {
			if rec.at >= c.from && rec.at <= c.to && rec.err == nil && rec.r.Status != drivers.StatusOff {
				p, _ := c.in.Transfer().Apply(rec.r.Raw)
				ts, ps = append(ts, rec.at.Seconds()), append(ps, p)
			}
		}
		_, slope := stat.LinearRegression(ts, ps, nil, false)
		q := vol * slope
		if relErr(q, qBefore) > c.tol {
			t.Errorf("hold test on %s (%d points): V·dp/dt = %.4g Pa·m³/s, but the pumps carried S·p = %.4g Pa·m³/s "+
				"just before the valve closed; want equal within %.0f %%", c.in.Name(), len(ts), q, qBefore, 100*c.tol)
		}
		if q < leak*(1-c.tol) || q > (leak+preLeak)*(1+c.tol) {
			t.Errorf("hold test on %s: Q = %.4g Pa·m³/s, want between the leak %.3g and leak + the outgassing before it opened, %.4g (± %.0f %%)",
				c.in.Name(), q, leak, leak+preLeak, 100*c.tol)
		}
	}
	if r := near(t, recs[ion.Name()], 214*time.Minute+40*time.Second).r; r.Status != drivers.StatusOff {
		t.Errorf("ion gauge near the end of the hold test: %s, want off above its protect pressure", r.Status)
	}
	if r := near(t, recs[ion.Name()], 220*time.Minute).r; r.Status != drivers.StatusOK {
		t.Errorf("ion gauge after the hold test: %s, want back on", r.Status)
	}

	tc := recs["wall-tc"]
	if rec := near(t, tc, 106*time.Minute); !errors.Is(rec.err, drivers.ErrNoReply) {
		t.Errorf("wall-tc at 1:46: %v, want no reply (silent 1:45–1:48)", rec.err)
	}
	if rec := near(t, tc, 145*time.Minute); rec.err != nil || math.Abs(rec.r.Raw-148.2) > 1.5 {
		t.Errorf("wall-tc at 2:25: %g °C (%v), want about 148 °C", rec.r.Raw, rec.err)
	}
}
