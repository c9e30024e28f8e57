package sim

import (
	"math"
	"strings"
	"testing"
	"time"
)

// Validate reports every problem at once, each naming its field.
func TestValidateReportsEveryProblem(t *testing.T) {
	bad := Config{
		Volume:        0,
		StartPressure: -1,
		AmbientC:      -300,
		Rough:         Pump{Speed: math.NaN()},
		High:          Pump{Speed: 0.06, Ultimate: 1e-7},
		Crossover:     0,
		Leak:          -1e-6,
		Outgassing:    math.Inf(1),
		OutgassingExp: 5,
		WallTau:       -time.Second,
		Events: []Event{
			{After: time.Hour, Action: ActLeak, Value: 1e-6}, // fine
			{After: -time.Second, Action: ActIsolate},
			{After: time.Hour, Action: "vacuum"},
			{After: time.Hour, Action: ActFail, Mode: "loud"},
			{After: time.Hour, Action: ActBake, Value: 100, Target: "wall-tc", Mode: ModeFault},
			{After: time.Hour, Action: ActBleed, Value: -2},
		},
	}
	err := bad.Validate()
	if err == nil {
		t.Fatal("Validate accepted a bad config")
	}
	got := err.Error()
	for _, want := range []string{
		"volume: must be a finite volume > 0 m³, got 0",
		"start_pressure: ",
		"ambient_c: ",
		"rough.speed: ",
		"crossover: must be a finite pressure above high.ultimate",
		"leak: ",
		"outgassing: ",
		"outgassing_exp: ",
		"wall_tau: ",
		"events[1].after: must not be negative",
		`events[2].action: unknown action "vacuum" (known: isolate, reopen, leak, bleed, bake, pump-off, pump-on, vent, fail, recover)`,
		"events[3].target: fail needs the name of an instrument",
		`events[3].mode: unknown mode "loud" (known: silent, fault)`,
		`events[4].target: only fail and recover take a target, got "wall-tc" for bake`,
		`events[4].mode: only fail takes a mode`,
		"events[5].value: ",
	} {
		if !strings.Contains(got, want) {
			t.Errorf("problems lack %q; got:\n%s", want, got)
		}
	}
	if n := strings.Count(got, "\n") + 1; n != 16 {
		t.Errorf("got %d problems, want 16 (events[0] is valid):\n%s", n, got)
	}
	if strings.Contains(got, "events[0]") {
		t.Errorf("a valid event was reported:\n%s", got)
	}
	if _, err := New(bad, time.Now); err == nil {
		t.Error("New accepted a config Validate rejects")
	}
}

func TestValidateAcceptsMinimalAndDemo(t *testing.T) {
	for name, c := range map[string]Config{
		"sealed vessel": {Volume: 0.001},
		"demo":          Demo(),
	} {
		if err := c.Validate(); err != nil {
			t.Errorf("%s: %v", name, err)
		}
	}
	if _, err := New(Config{Volume: 1}, nil); err == nil || !strings.Contains(err.Error(), "clock") {
		t.Errorf("New with a nil clock: %v, want an error about the clock", err)
	}
}

func TestCheckTargets(t *testing.T) {
	c := Demo()
	var names []string
	for _, ic := range DemoInstruments() {
		names = append(names, ic.Name)
	}
	if err := c.CheckTargets(names); err != nil {
		t.Errorf("demo targets: %v", err)
	}
	err := c.CheckTargets([]string{"chamber-ion"})
	if err == nil || !strings.Contains(err.Error(), `events[1].target: no instrument named "wall-tc" (instruments: chamber-ion)`) {
		t.Errorf("missing target: %v", err)
	}
}
