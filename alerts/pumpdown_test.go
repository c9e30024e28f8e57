package alerts

import (
	"errors"
	"math"
	"testing"
)

// Worked checks from REFERENCES.md §4a. Inputs in litres and mbar, converted
// exactly (1 L = 1e-3 m³, 1 mbar = 100 Pa).
func TestPumpDownTime(t *testing.T) {
	d := PumpDown{Volume: 100e-3, Speed: 10e-3} // V = 100 L, S_eff = 10 L/s
	for _, c := range []struct {
		to, want float64 // Pa, s
	}{
		{100, 69.209}, // 1013.25 → 1 mbar: 69.209 s (homo-deus.com pump-speed lab; REFERENCES.md §4a)
		{10, 92.235},  // 1013.25 → 0.1 mbar: 92.235 s (same source)
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
	// Effective speed: S = 500 L/s through C = 100 L/s gives 83.333 L/s
	// (homo-deus.com example; REFERENCES.md §4a).
	s := EffectiveSpeed(0.5, 0.1)
	if math.Abs(s*1e3-83.333) > 0.001 {
		t.Errorf("EffectiveSpeed(500 L/s, 100 L/s) = %.4f L/s, want 83.333", s*1e3)
	}
	// Ultimate pressure Q/S: 1e-5 mbar·L/s through 83.333 L/s is 1.2e-7 mbar
	// (REFERENCES.md §4a, rel 1e-9 with S = 83.333 exactly as printed).
	d := PumpDown{Volume: 0.1, Speed: 83.333e-3, Load: 1e-6} // 1e-5 mbar·L/s = 1e-6 Pa·m³/s
	if got, want := d.Limit(), 1e-5/83.333*100; math.Abs(got-want) > 1e-9*want {
		t.Errorf("Limit = %g Pa, want %g Pa (1.2e-7 mbar)", got, want)
	}
	if math.Abs(d.Limit()/100-1.2e-7) > 1e-4*1.2e-7 {
		t.Errorf("Limit = %g mbar, want 1.2e-7 mbar", d.Limit()/100)
	}
	// With a load the ratio uses p − p_limit (REFERENCES.md §4 "with gas
	// load"): from 1 Pa to 2·limit takes (V/S)·ln((1 − pl)/pl).
	pl := d.Limit()
	got, err := d.Time(1, 2*pl)
	if err != nil {
		t.Fatal(err)
	}
	if want := d.Volume / d.Speed * math.Log((1-pl)/pl); math.Abs(got-want) > 1e-12*want {
		t.Errorf("Time with load = %g s, want %g s", got, want)
	}
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
