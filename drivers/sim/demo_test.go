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

// The demo looks right at speed 600 for 25 s of wall time: a pump-down from
// atmosphere, the bake's pressure bump, a lower base after cooling, the leak,
// and a hold test whose rise gives back the leak (REFERENCES.md §3,
// Q = V·dp/dt). Invented scenario; the checks are qualitative except the
// hold test.
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

	// Hold test 3:30–3:35: Q = V·dp/dt from a straight-line fit is the leak
	// plus a little outgassing, 1.13e-6 Pa·m³/s. The CDG's noise (1e-4 of its
	// 13.3 Pa full scale) is a tenth of the rise, so its fit is looser.
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
		if q := 0.030 * slope; relErr(q, 1.13e-6) > c.tol {
			t.Errorf("hold test on %s (%d points): Q = %.3g Pa·m³/s, want 1.13e-6 ± %.0f %%", c.in.Name(), len(ts), q, 100*c.tol)
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
