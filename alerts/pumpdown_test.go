package alerts

import (
	"errors"
	"math"
	"testing"
)

// Worked checks from REFERENCES.md §4a. Inputs in litres and mbar, converted
// exactly (1 L = 1e-3 m³, 1 mbar = 100 Pa). The relation is the solution of
// V·dp/dt = −S·p for a constant speed and no gas load, t = (V/S)·ln(p0/p)
// (the textbook pump-down equation: O'Hanlon, A User's Guide to Vacuum
// Technology, pumping chapter, from memory; REFERENCES.md §4). By hand, with
// V/S = 100 L / 10 L/s = 10 s:
//
//	1013.25 → 1 mbar:   10 s × ln 1013.25 = 10 s × (6.907755 + 0.013163) = 69.209 s
//	1013.25 → 0.1 mbar: 10 s × ln 10132.5 = 69.209 s + 10 s × ln 10 = 69.209 s + 23.026 s = 92.235 s
func TestPumpDownTime(t *testing.T) {
	d := PumpDown{Volume: 100e-3, Speed: 10e-3} // V = 100 L, S_eff = 10 L/s
	for _, c := range []struct {
		to, want float64 // Pa, s
	}{
		{100, 69.209}, // 1013.25 → 1 mbar (REFERENCES.md §4a)
		{10, 92.235},  // 1013.25 → 0.1 mbar (REFERENCES.md §4a)
	} {
		got, err := d.Time(101325, c.to)
		if err != nil {
			t.Fatal(err)
		}
		if math.Abs(got-c.want) > 0.001 {
			t.Errorf("Time(101325 Pa, %g Pa) = %.4f s, want %.3f ± 0.001 s", c.to, got, c.want)
		}
		if p := d.Pressure(101325, got); math.Abs(p-c.to) > 1e-9*c.to {
			t.Errorf("Pressure after %.3f s = %g Pa, want %g Pa back", got, p, c.to)
		}
	}
}

func TestPumpDownWithLoad(t *testing.T) {
	// Effective speed: 1/S_eff = 1/S + 1/C (conductance in series with a
	// pump; O'Hanlon, from memory; REFERENCES.md §4). S = 500 L/s through
	// C = 100 L/s: 1/S_eff = 0.002 + 0.010 = 0.012 s/L, S_eff = 83.333 L/s
	// (REFERENCES.md §4a).
	s := EffectiveSpeed(0.5, 0.1)
	if math.Abs(s*1e3-83.333) > 0.001 {
		t.Errorf("EffectiveSpeed(500 L/s, 100 L/s) = %.4f L/s, want 83.333", s*1e3)
	}
	// Ultimate pressure p = Q/S (steady state of V·dp/dt = Q − S·p;
	// REFERENCES.md §4a): 1e-5 mbar·L/s through 83.333 L/s as printed is, by
	// long division, 1.2000048e-7 mbar = 1.2000048e-5 Pa (1.2e-7 mbar to
	// 4e-6 with the exact 250/3 L/s).
	d := PumpDown{Volume: 0.1, Speed: 83.333e-3, Load: 1e-6} // 1e-5 mbar·L/s = 1e-6 Pa·m³/s
	if got := d.Limit(); math.Abs(got-1.2000048e-5) > 1e-7*1.2000048e-5 {
		t.Errorf("Limit = %.8g Pa, want 1.2000048e-5 Pa (1.2e-7 mbar)", got)
	}
	if math.Abs(d.Limit()/100-1.2e-7) > 1e-4*1.2e-7 {
		t.Errorf("Limit = %g mbar, want 1.2e-7 mbar", d.Limit()/100)
	}
	// With a gas load Q the pressure tends to p_l = Q/S and the ratio uses
	// p − p_l (REFERENCES.md §4 "with gas load"): t = (V/S)·ln((p0 − p_l)/(p − p_l)).
	// A worked example by hand: V = 30 L, S = 10 L/s, Q = 1 mbar·L/s, so
	// V/S = 3 s and p_l = Q/S = 0.1 mbar; from p0 = 1000.1 mbar to p = 1.1 mbar
	// t = 3 s × ln(1000/1) = 3 s × 6.907755 = 20.723 s. With no load the
	// same chamber from 1000 to 1 mbar takes the same 3·ln 1000 = 20.723 s.
	load := PumpDown{Volume: 30e-3, Speed: 10e-3, Load: 0.1} // 1 mbar·L/s = 0.1 Pa·m³/s
	if got := load.Limit(); math.Abs(got-10) > 1e-12 {
		t.Errorf("Limit = %g Pa, want 10 Pa (0.1 mbar = 1 mbar·L/s / 10 L/s)", got)
	}
	for _, c := range []struct {
		d      PumpDown
		p0, to float64 // Pa
	}{{load, 100010, 110}, {PumpDown{Volume: 30e-3, Speed: 10e-3}, 100000, 100}} {
		got, err := c.d.Time(c.p0, c.to)
		if err != nil {
			t.Fatal(err)
		}
		if math.Abs(got-20.723) > 0.001 {
			t.Errorf("%+v: Time(%g Pa, %g Pa) = %.4f s, want 3 s × ln 1000 = 20.723 s ± 0.001 s", c.d, c.p0, c.to, got)
		}
	}
	pl := d.Limit()
	if _, err := d.Time(1, pl/2); !errors.Is(err, ErrBelowLimit) {
		t.Errorf("Time below the limit: err = %v, want ErrBelowLimit", err)
	}
}

func TestPumpDownRejectsBadInput(t *testing.T) {
	for _, d := range []PumpDown{{Volume: 0, Speed: 1}, {Volume: 1, Speed: -1}, {Volume: 1, Speed: 1, Load: -1},
		{Volume: math.Inf(1), Speed: 1}, {Volume: 1, Speed: 1, Base: math.NaN()}} {
		if _, err := d.Time(1e5, 1); err == nil {
			t.Errorf("%+v: Time succeeded, want an error", d)
		}
	}
	if _, err := (PumpDown{Volume: 1, Speed: 1}).Time(1e5, 0); err == nil {
		t.Error("Time to 0 Pa succeeded, want an error")
	}
	if got, err := (PumpDown{Volume: 1, Speed: 1}).Time(10, 20); err != nil || got != 0 {
		t.Errorf("Time up to a higher pressure = %g, %v; want 0, nil", got, err)
	}
}
