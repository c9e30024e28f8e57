package sim

import (
	"errors"
	"fmt"
	"math"
	"slices"
	"strings"
	"time"
)

// Atmosphere is the standard atmosphere in Pa (10th CGPM 1954, Resolution 4),
// the pressure a chamber starts at and is vented to unless told otherwise.
const Atmosphere = 101325.0

// Config describes one simulated chamber. All values are SI: Pa, m³, m³/s,
// Pa·m³/s, °C and durations. The zero value of every optional field is a
// sensible default, said beside the field.
type Config struct {
	Volume        float64       // m³; must be > 0
	StartPressure float64       // Pa; 0 means Atmosphere
	AmbientC      float64       // °C; the zero value is taken as 0 °C, so callers set it (daemon defaults 22)
	Rough         Pump          // roughing stage; Speed 0 = no roughing stage
	High          Pump          // Speed 0 = no high-vacuum stage
	Crossover     float64       // Pa: the high stage joins below this; required when High.Speed > 0
	Leak          float64       // Pa·m³/s, constant real leak at start
	Bleed         float64       // Pa·m³/s through the bleed valve at start
	Outgassing    float64       // Pa·m³/s one hour after the start (or the last vent), at ambient temperature
	OutgassingExp float64       // exponent n in t^-n; 0 means 1 (metals)
	WallTau       time.Duration // heater/wall lag; 0 means 20 min
	Isolated      bool          // start with the isolation valve closed
	PumpsOff      bool          // start with the pumps stopped
	Seed          int64         // seeds every instrument's noise
	Events        []Event       // the scenario timeline, in any order
}

// Pump is one pumping stage: S(p) = Speed·(1 − Ultimate/p), never below 0.
type Pump struct {
	Speed    float64 // m³/s
	Ultimate float64 // Pa: the stage's own base pressure
}

// Event is one change on the scenario timeline, at an offset from the start.
type Event struct {
	After  time.Duration // since start
	Action string        // one of Actions()
	Value  float64       // leak/bleed: Pa·m³/s; bake: setpoint °C (at or below ambient = heater off); vent: Pa, 0 = Atmosphere
	Target string        // instrument name for fail/recover
	Mode   string        // fail: "silent" (stops answering) or "fault" (reports sensor-fault)
}

// The actions an Event may take.
const (
	ActIsolate = "isolate"  // close the isolation valve: pumping speed 0
	ActReopen  = "reopen"   // open it again
	ActLeak    = "leak"     // set the real leak to Value
	ActBleed   = "bleed"    // set the bleed valve throughput to Value
	ActBake    = "bake"     // set the heater setpoint to Value
	ActPumpOff = "pump-off" // stop both stages
	ActPumpOn  = "pump-on"  // start them again
	ActVent    = "vent"     // fill to Value at once and restart the outgassing clock
	ActFail    = "fail"     // instrument Target fails in Mode
	ActRecover = "recover"  // instrument Target answers normally again
)

// The failure modes of an instrument.
const (
	ModeSilent = "silent" // stops answering: Read waits, then ErrNoReply
	ModeFault  = "fault"  // answers with drivers.StatusSensorFault
)

// Actions lists the known event actions.
func Actions() []string {
	return []string{ActIsolate, ActReopen, ActLeak, ActBleed, ActBake,
		ActPumpOff, ActPumpOn, ActVent, ActFail, ActRecover}
}

// Modes lists the known failure modes.
func Modes() []string { return []string{ModeSilent, ModeFault} }

// checker collects problems; it never stops at the first.
type checker struct{ errs []error }

func (c *checker) expect(ok bool, field, format string, args ...any) {
	if !ok {
		c.errs = append(c.errs, fmt.Errorf("%s: %s", field, fmt.Sprintf(format, args...)))
	}
}

// nonNegative reports a value that is NaN, infinite or below zero.
func (c *checker) nonNegative(v float64, field, unit string) {
	c.expect(v >= 0 && !math.IsInf(v, 1), field, "must be a finite value ≥ 0 %s, got %g", unit, v)
}

func (c *checker) celsius(v float64, field string) {
	c.expect(v > -273.15 && !math.IsInf(v, 1), field, "must be a finite temperature above -273.15 °C, got %g", v)
}

// Validate reports every problem in c at once, each naming its field the way
// the YAML mapping spells it (volume, rough.speed, events[2].action, ...).
func (c Config) Validate() error {
	var v checker
	v.expect(c.Volume > 0 && !math.IsInf(c.Volume, 1), "volume", "must be a finite volume > 0 m³, got %g", c.Volume)
	v.nonNegative(c.StartPressure, "start_pressure", "Pa")
	v.celsius(c.AmbientC, "ambient_c")
	v.pump(c.Rough, "rough")
	v.pump(c.High, "high")
	if c.High.Speed > 0 {
		v.expect(c.Crossover > c.High.Ultimate && !math.IsInf(c.Crossover, 1), "crossover",
			"must be a finite pressure above high.ultimate (%g Pa) when high.speed is set, got %g", c.High.Ultimate, c.Crossover)
	} else {
		v.nonNegative(c.Crossover, "crossover", "Pa")
	}
	v.nonNegative(c.Leak, "leak", "Pa·m³/s")
	v.nonNegative(c.Bleed, "bleed", "Pa·m³/s")
	v.nonNegative(c.Outgassing, "outgassing", "Pa·m³/s")
	v.expect(c.OutgassingExp >= 0 && c.OutgassingExp <= 3, "outgassing_exp",
		"must be between 0 and 3 (0 means 1; metals ≈ 1, elastomers ≈ 0.5), got %g", c.OutgassingExp)
	v.expect(c.WallTau >= 0, "wall_tau", "must not be negative, got %s", c.WallTau)
	for i, e := range c.Events {
		v.event(e, fmt.Sprintf("events[%d]", i))
	}
	return errors.Join(v.errs...)
}

func (c *checker) pump(p Pump, field string) {
	c.nonNegative(p.Speed, field+".speed", "m³/s")
	c.nonNegative(p.Ultimate, field+".ultimate", "Pa")
}

func (c *checker) event(e Event, path string) {
	c.expect(e.After >= 0, path+".after", "must not be negative, got %s", e.After)
	if !slices.Contains(Actions(), e.Action) {
		c.expect(false, path+".action", "unknown action %q (known: %s)", e.Action, strings.Join(Actions(), ", "))
		return
	}
	switch e.Action {
	case ActLeak, ActBleed:
		c.nonNegative(e.Value, path+".value", "Pa·m³/s")
	case ActVent:
		c.nonNegative(e.Value, path+".value", "Pa (0 means atmosphere)")
	case ActBake:
		c.celsius(e.Value, path+".value")
	}
	needsTarget := e.Action == ActFail || e.Action == ActRecover
	if needsTarget {
		c.expect(e.Target != "", path+".target", "%s needs the name of an instrument", e.Action)
	} else {
		c.expect(e.Target == "", path+".target", "only fail and recover take a target, got %q for %s", e.Target, e.Action)
	}
	if e.Action == ActFail {
		c.expect(slices.Contains(Modes(), e.Mode), path+".mode", "unknown mode %q (known: %s)", e.Mode, strings.Join(Modes(), ", "))
	} else {
		c.expect(e.Mode == "", path+".mode", "only fail takes a mode, got %q for %s", e.Mode, e.Action)
	}
}

// CheckTargets reports every fail or recover event whose target is not among
// names (the instruments the caller will create), so a typo in a scenario
// does not silently fail nobody.
func (c Config) CheckTargets(names []string) error {
	var v checker
	for i, e := range c.Events {
		if e.Action == ActFail || e.Action == ActRecover {
			v.expect(slices.Contains(names, e.Target), fmt.Sprintf("events[%d].target", i),
				"no instrument named %q (instruments: %s)", e.Target, strings.Join(names, ", "))
		}
	}
	return errors.Join(v.errs...)
}
