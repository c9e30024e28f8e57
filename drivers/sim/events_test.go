package sim

import (
	"context"
	"math"
	"strings"
	"sync"
	"testing"
	"time"
)

func pumpedConfig() Config {
	return Config{Volume: 0.03, AmbientC: 22, Rough: Pump{Speed: 5.0 / 3600, Ultimate: 0.5},
		High: Pump{Speed: 0.06, Ultimate: 1e-7}, Crossover: 5, Outgassing: 3e-5}
}

// Events apply in time order whatever their order in the config, and one
// call across several events ends where stepping through them does.
func TestEventsApplyInTimeOrder(t *testing.T) {
	events := []Event{
		{After: 40 * time.Minute, Action: ActReopen},
		{After: 10 * time.Minute, Action: ActLeak, Value: 2e-6},
		{After: 30 * time.Minute, Action: ActIsolate},
		{After: 20 * time.Minute, Action: ActBake, Value: 80},
	}
	shuffled := pumpedConfig()
	shuffled.Events = events
	a, clkA := newTestChamber(t, shuffled)
	b, clkB := newTestChamber(t, shuffled)
	for d := time.Duration(0); d <= time.Hour; d += time.Minute {
		stateAt(b, clkB, d)
	}
	got, want := stateAt(a, clkA, time.Hour), stateAt(b, clkB, time.Hour)
	if relErr(got.Pressure, want.Pressure) > 1e-5 || relErr(got.WallC, want.WallC) > 1e-12 {
		t.Errorf("one call: p %g Pa, wall %g °C; stepping: p %g Pa, wall %g °C", got.Pressure, got.WallC, want.Pressure, want.WallC)
	}
	c, clkC := newTestChamber(t, shuffled)
	if st := stateAt(c, clkC, 35*time.Minute); !st.Isolated || st.Leak != 2e-6 || st.HeaterC != 80 || st.PumpSpeed != 0 {
		t.Errorf("at 35 min: isolated=%v leak=%g heater=%g speed=%g, want true, 2e-6, 80, 0", st.Isolated, st.Leak, st.HeaterC, st.PumpSpeed)
	}
	if st := stateAt(c, clkC, 45*time.Minute); st.Isolated || st.PumpSpeed == 0 {
		t.Errorf("at 45 min: isolated=%v speed=%g, want reopened and pumping", st.Isolated, st.PumpSpeed)
	}
}

// Time only moves forward: asking for an earlier time returns the present.
func TestStateNeverIntegratesBackward(t *testing.T) {
	ch, clk := newTestChamber(t, pumpedConfig())
	late := stateAt(ch, clk, 2*time.Hour)
	early := stateAt(ch, clk, time.Hour)
	if early != late {
		t.Errorf("after asking for 2 h, asking for 1 h gave %+v, want the 2 h state %+v", early, late)
	}
	if !late.At.Equal(epoch.Add(2*time.Hour)) || late.Elapsed != 2*time.Hour {
		t.Errorf("state at %s (elapsed %s), want %s", late.At, late.Elapsed, epoch.Add(2*time.Hour))
	}
}

// Pumps off seal the chamber as the valve does; vent refills it and starts
// the outgassing clock over.
func TestPumpOffAndVent(t *testing.T) {
	cfg := pumpedConfig()
	cfg.Leak = 3e-6
	cfg.Events = []Event{
		{After: time.Hour, Action: ActPumpOff},
		{After: 2 * time.Hour, Action: ActVent},
		{After: 2*time.Hour + time.Second, Action: ActPumpOn},
	}
	ch, clk := newTestChamber(t, cfg)
	p1 := stateAt(ch, clk, time.Hour).Pressure
	off := stateAt(ch, clk, time.Hour+10*time.Minute)
	if off.PumpsOn || off.PumpSpeed != 0 || !(off.Pressure > p1+3e-6*600/0.03) {
		t.Errorf("pumps off: on=%v speed=%g p=%g (from %g), want stopped and rising at least at the leak's Q/V", off.PumpsOn, off.PumpSpeed, off.Pressure, p1)
	}
	vented := stateAt(ch, clk, 2*time.Hour)
	if vented.Pressure != Atmosphere {
		t.Errorf("after vent: p = %g Pa, want %g", vented.Pressure, Atmosphere)
	}
	if want := cfg.Outgassing * 3600 / outgassingMinAge; relErr(vented.Outgassing, want) > 1e-12 {
		t.Errorf("after vent: outgassing %g, want the fresh-wall %g", vented.Outgassing, want)
	}
	if st := stateAt(ch, clk, 3*time.Hour); !st.PumpsOn || !(st.Pressure < 1e-2) {
		t.Errorf("an hour after pump-on: on=%v p=%g Pa, want pumped below 1e-2 Pa", st.PumpsOn, st.Pressure)
	}
	if err := ch.Vent(5e4); err != nil || ch.State().Pressure != 5e4 {
		t.Errorf("Vent(5e4): err %v, p %g", err, ch.State().Pressure)
	}
}

// The high stage joins only below the crossover.
func TestHighStageJoinsBelowCrossover(t *testing.T) {
	cfg := pumpedConfig()
	cfg.Outgassing = 0
	ch, clk := newTestChamber(t, cfg)
	// Roughing alone: 5 m³/h from 101325 Pa to 5 Pa takes (V/S)·ln((p0−u)/(5−u)).
	tc := cfg.Volume / cfg.Rough.Speed * math.Log((Atmosphere-0.5)/(5-0.5))
	before := stateAt(ch, clk, seconds(tc-1))
	if want := cfg.Rough.Speed * (1 - 0.5/before.Pressure); relErr(before.PumpSpeed, want) > 1e-12 {
		t.Errorf("1 s before crossover (p = %g Pa): speed %g m³/s, want the roughing stage alone %g", before.Pressure, before.PumpSpeed, want)
	}
	after := stateAt(ch, clk, seconds(tc+1))
	if !(after.PumpSpeed > cfg.High.Speed) || !(after.Pressure < 5) {
		t.Errorf("1 s after crossover: p = %g Pa, speed %g m³/s, want below 5 Pa with both stages", after.Pressure, after.PumpSpeed)
	}
}

func TestSettersRejectBadValues(t *testing.T) {
	ch, _ := newTestChamber(t, pumpedConfig())
	for name, err := range map[string]error{
		"leak":  ch.SetLeak(-1),
		"bleed": ch.SetBleed(math.NaN()),
		"vent":  ch.Vent(math.Inf(1)),
		"bake":  ch.SetBake(-300),
	} {
		if err == nil || !strings.HasPrefix(err.Error(), name+": ") {
			t.Errorf("%s: error %v, want one starting %q", name, err, name+": ")
		}
	}
	if err := ch.SetLeak(1e-7); err != nil || ch.State().Leak != 1e-7 {
		t.Errorf("SetLeak(1e-7): err %v, leak %g", err, ch.State().Leak)
	}
}

// A load too large for the high stage drives the pressure up through the
// crossover; the high stage drops out and the roughing stage alone holds
// p = u + Q/S (REFERENCES.md §4 "with gas load Q and pump base pressure").
func TestHighStageDropsOutAboveCrossover(t *testing.T) {
	cfg := pumpedConfig()
	cfg.Outgassing = 0
	const q = 0.5 // Pa·m³/s
	cfg.Events = []Event{{After: time.Hour, Action: ActBleed, Value: q}}
	ch, clk := newTestChamber(t, cfg)
	if p := stateAt(ch, clk, time.Hour).Pressure; !(p < 1e-5) {
		t.Fatalf("before the bleed: %g Pa, want high vacuum", p)
	}
	st := stateAt(ch, clk, 3*time.Hour)
	if want := cfg.Rough.Ultimate + q/cfg.Rough.Speed; relErr(st.Pressure, want) > 1e-9 {
		t.Errorf("with a %g Pa·m³/s bleed: %.10g Pa, want %.10g", q, st.Pressure, want)
	}
	if want := cfg.Rough.Speed * (1 - cfg.Rough.Ultimate/st.Pressure); relErr(st.PumpSpeed, want) > 1e-12 {
		t.Errorf("speed %g m³/s, want the roughing stage alone %g", st.PumpSpeed, want)
	}
}

// Reads, state queries and changes from many goroutines are safe (run with
// -race) and time still only moves forward.
func TestConcurrentUse(t *testing.T) {
	clk := NewClock(epoch, 1000)
	ch, err := New(Demo(), clk.Now)
	if err != nil {
		t.Fatal(err)
	}
	var ins []*Instrument
	for _, ic := range DemoInstruments() {
		ins = append(ins, mustInstrument(t, ch, ic))
	}
	var wg sync.WaitGroup
	for _, in := range ins {
		wg.Go(func() {
			var last time.Time
			for range 200 {
				r, err := in.Read(context.Background())
				if err == nil && r.At.Before(last) {
					t.Errorf("%s: reading at %s after one at %s", in.Name(), r.At, last)
				}
				last = r.At
			}
		})
	}
	wg.Go(func() {
		for i := range 200 {
			ch.Isolate(i%2 == 0)
			ch.SetLeak(float64(i) * 1e-9)
			ch.State()
		}
	})
	wg.Wait()
}
