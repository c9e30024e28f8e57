package sim

import (
	"context"
	"errors"
	"slices"
	"strings"
	"testing"
	"testing/synctest"
	"time"

	"holdfast/drivers"
)

// A silent instrument makes Read wait its timeout and fail with ErrNoReply;
// a cancelled context ends the wait at once. Timing runs on synctest's clock.
func TestSilentInstrumentTimesOutOrCancels(t *testing.T) {
	synctest.Test(t, func(t *testing.T) {
		ch, err := New(Config{Volume: 0.03, StartPressure: 1e-4, Isolated: true}, time.Now)
		if err != nil {
			t.Fatal(err)
		}
		in := mustInstrument(t, ch, InstrumentConfig{Name: "ion-1", Kind: KindIon, Timeout: 300 * time.Millisecond})
		if err := in.Fail(ModeSilent); err != nil {
			t.Fatal(err)
		}
		start := time.Now()
		_, err = in.Read(context.Background())
		if waited := time.Since(start); waited != 300*time.Millisecond {
			t.Errorf("silent Read returned after %s, want the 300ms timeout", waited)
		}
		var ge *drivers.GaugeError
		if !errors.As(err, &ge) || ge.Gauge != "ion-1" || ge.Op != "read" || !errors.Is(err, drivers.ErrNoReply) {
			t.Errorf("silent Read error %#v, want *GaugeError{ion-1, read, ErrNoReply}", err)
		}

		ctx, cancel := context.WithCancel(context.Background())
		time.AfterFunc(5*time.Millisecond, cancel)
		start = time.Now()
		_, err = in.Read(ctx)
		if waited := time.Since(start); waited != 5*time.Millisecond {
			t.Errorf("cancelled Read returned after %s, want 5ms", waited)
		}
		if !errors.As(err, &ge) || !errors.Is(err, context.Canceled) {
			t.Errorf("cancelled Read error %v, want a *GaugeError wrapping context.Canceled", err)
		}
		if _, err := in.Read(ctx); !errors.Is(err, context.Canceled) {
			t.Errorf("Read on a done context: %v, want context.Canceled at once", err)
		}

		in.Recover()
		if r := mustRead(t, in); r.Status != drivers.StatusOK {
			t.Errorf("after Recover: %s, want ok", r.Status)
		}
		def := mustInstrument(t, ch, InstrumentConfig{Name: "ion-2", Kind: KindIon})
		if err := def.Fail(ModeSilent); err != nil {
			t.Fatal(err)
		}
		start = time.Now()
		def.Read(context.Background())
		if waited := time.Since(start); waited != defaultTimeout {
			t.Errorf("default timeout %s, want %s", waited, defaultTimeout)
		}
	})
}

// A faulty instrument answers, with a sensor-fault status; scenario events
// fail and recover instruments by name.
func TestFaultModeAndEvents(t *testing.T) {
	ch, clk := newTestChamber(t, Config{Volume: 0.03, StartPressure: 10, Isolated: true, Events: []Event{
		{After: time.Minute, Action: ActFail, Target: "pirani", Mode: ModeFault},
		{After: 2 * time.Minute, Action: ActRecover, Target: "pirani"},
	}})
	in := mustInstrument(t, ch, InstrumentConfig{Name: "pirani", Kind: KindPirani})
	for _, c := range []struct {
		at   time.Duration
		want drivers.Status
	}{{0, drivers.StatusOK}, {90 * time.Second, drivers.StatusSensorFault}, {3 * time.Minute, drivers.StatusOK}} {
		clk.at(c.at)
		r := mustRead(t, in)
		if r.Status != c.want || !r.At.Equal(epoch.Add(c.at)) {
			t.Errorf("at %s: %s at %s, want %s at %s", c.at, r.Status, r.At, c.want, epoch.Add(c.at))
		}
	}
	if err := in.Fail("loud"); err == nil || !strings.Contains(err.Error(), `unknown mode "loud"`) {
		t.Errorf("Fail(loud): %v", err)
	}
}

// The same seed gives the same readings; another seed does not; and one
// instrument's noise does not depend on how often another is read.
func TestNoiseDeterministicBySeed(t *testing.T) {
	series := func(seed int64, other int) []float64 {
		cfg := pumpedConfig()
		cfg.Seed = seed
		ch, clk := newTestChamber(t, cfg)
		in := mustInstrument(t, ch, InstrumentConfig{Name: "pirani", Kind: KindPirani, Digits: 6})
		tc := mustInstrument(t, ch, InstrumentConfig{Name: "tc", Kind: KindThermocouple})
		var out []float64
		for i := range 50 {
			clk.at(time.Duration(i) * time.Second)
			for range other {
				mustRead(t, tc)
			}
			out = append(out, mustRead(t, in).Raw)
		}
		return out
	}
	a, b, c, d := series(3, 0), series(3, 0), series(4, 0), series(3, 2)
	same := slices.Equal[[]float64]
	if !same(a, b) {
		t.Error("two runs with seed 3 differ")
	}
	if same(a, c) {
		t.Error("seeds 3 and 4 gave the same readings")
	}
	if !same(a, d) {
		t.Error("reading another instrument changed this one's noise")
	}
}

// Instrument reports every problem in its config, naming each field.
func TestInstrumentConfigProblems(t *testing.T) {
	ch, _ := heldAt(t, 1)
	_, err := ch.Instrument(InstrumentConfig{Kind: KindCDG, Digits: 20, Noise: -1, Where: "roof", Protect: 1, Timeout: -1})
	if err == nil {
		t.Fatal("accepted a bad instrument")
	}
	for _, want := range []string{
		"name: must not be empty", "digits: must be between 1 and 17", "noise: ", "timeout: ",
		`where: only thermocouple and rtd instruments take where (this one is "cdg")`,
		"protect: only ion instruments take protect", "full_scale: a cdg needs its full scale",
	} {
		if !strings.Contains(err.Error(), want) {
			t.Errorf("problems lack %q; got:\n%v", want, err)
		}
	}
	if _, err := ch.Instrument(InstrumentConfig{Name: "x", Kind: "manometer"}); err == nil ||
		!strings.Contains(err.Error(), `kind: unknown instrument kind "manometer" (known: pirani, cdg, ion, thermocouple, rtd)`) {
		t.Errorf("unknown kind: %v", err)
	}
	mustInstrument(t, ch, InstrumentConfig{Name: "x", Kind: KindIon})
	if _, err := ch.Instrument(InstrumentConfig{Name: "x", Kind: KindIon}); err == nil || !strings.Contains(err.Error(), `"x" already`) {
		t.Errorf("duplicate name: %v", err)
	}
}
