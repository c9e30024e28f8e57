package config

import (
	"fmt"
	"slices"
	"strings"
	"time"

	"holdfast/calib"
)

// BakeConfig is the bake: section, the chamber's bake plan. The hottest
// of the temperature gauges leads the phases (idle, ramp, hold, cool,
// done); see alerts.Bake.
type BakeConfig struct {
	Temperatures   []string    `yaml:"temperatures"`    // temperature gauges watched
	Pressure       string      `yaml:"pressure"`        // pressure gauge judged and summarised; optional
	Start          string      `yaml:"start"`           // on_ramp (default) or api
	StartRise      Text        `yaml:"start_rise"`      // on_ramp: rise above the resting level that starts a bake; default 10 C
	RampUp         Text        `yaml:"ramp_up"`         // largest heating rate, e.g. 2 C/min
	Hold           Temperature `yaml:"hold"`            // hold temperature
	Tolerance      Text        `yaml:"tolerance"`       // how close to hold counts as at temperature; default 5 C
	HoldFor        Duration    `yaml:"hold_for"`        // time at temperature the plan asks for
	CoolDown       Text        `yaml:"cool_down"`       // largest cooling rate, e.g. 1 C/min
	CoolTo         Temperature `yaml:"cool_to"`         // the bake is done at or below this; default 50 C
	MaxTemperature Temperature `yaml:"max_temperature"` // never above this (alarm at any time)
	MaxPressure    Pressure    `yaml:"max_pressure"`    // pressure limit while the bake runs
	RateWindow     Duration    `yaml:"rate_window"`     // span of the rate's least-squares line; default 10 min
	RateDeadband   Text        `yaml:"rate_deadband"`   // default a tenth of each rate limit
	Severity       string      `yaml:"severity"`        // of the rate and pressure alarms; default high (over-temperature is critical)

	Resolved BakeResolved `yaml:"-"` // SI values, resolved by the checker
}

// BakeResolved is a bake plan's limits in °C and °C/s, filled in by the checker.
type BakeResolved struct {
	StartRise, RampUp, CoolDown, Tolerance, RateDeadband float64 // °C, °C/s
	HasDeadband                                          bool
}

// bakeAlarmNames are the alarms a bake plan adds, by check.
var BakeAlarmNames = map[string]string{
	"over-temperature": "bake-over-temperature", "heating-fast": "bake-heating-too-fast",
	"cooling-fast": "bake-cooling-too-fast", "pressure-high": "bake-pressure-high",
}

func (v *checker) bake(b *BakeConfig) {
	if b == nil {
		return
	}
	v.expect(len(b.Temperatures) > 0, "bake.temperatures", "list the temperature gauges the bake is judged by, e.g. temperatures: [wall-tc]")
	for i, g := range b.Temperatures {
		gc, ok := v.cfg.Gauges[g]
		v.expect(ok && gc != nil && gc.Kind == "temperature", pathIdx("bake.temperatures", i),
			"%q is not a temperature gauge (known: %s)", g, knownList(v.gaugesWhere(func(g *GaugeConfig) bool { return g.Kind == "temperature" })))
	}
	if b.Pressure != "" {
		gc, ok := v.cfg.Gauges[b.Pressure]
		v.expect(ok && gc != nil && gc.Kind == "pressure", "bake.pressure",
			"%q is not a pressure gauge (known: %s)", b.Pressure, knownList(v.gaugesWhere(func(g *GaugeConfig) bool { return g.Kind == "pressure" })))
	}
	if b.Start == "" {
		b.Start = "on_ramp"
	}
	v.expect(b.Start == "on_ramp" || b.Start == "api", "bake.start",
		"want on_ramp (a bake starts when the temperature rises) or api (POST /api/v1/bakes starts it), got %q", b.Start)
	b.Resolved.StartRise = v.bakeDiff("bake.start_rise", b.StartRise, 10)
	b.Resolved.Tolerance = v.bakeDiff("bake.tolerance", b.Tolerance, 5)
	b.Resolved.RampUp, _ = v.rate("bake.ramp_up", b.RampUp, calib.Temperature)
	b.Resolved.CoolDown, _ = v.rate("bake.cool_down", b.CoolDown, calib.Temperature)
	v.expect(b.RampUp.Set && b.Resolved.RampUp > 0, "bake.ramp_up", "want the largest heating rate your viewports, seals and feedthroughs allow, such as 2 C/min")
	v.expect(b.CoolDown.Set && b.Resolved.CoolDown > 0, "bake.cool_down", "want the largest cooling rate allowed, such as 1 C/min")
	if b.RateDeadband.Set {
		b.Resolved.RateDeadband, b.Resolved.HasDeadband = v.rate("bake.rate_deadband", b.RateDeadband, calib.Temperature)
		v.expect(b.Resolved.RateDeadband >= 0, "bake.rate_deadband", "must not be negative")
	}
	v.expect(b.Hold > 0, "bake.hold", "want the hold temperature, such as 150 C")
	v.expect(b.HoldFor > 0, "bake.hold_for", "want the time at temperature the plan asks for, such as 24h")
	if b.CoolTo == 0 {
		b.CoolTo = 50
	}
	v.expect(float64(b.CoolTo) < float64(b.Hold)-b.Resolved.Tolerance, "bake.cool_to",
		"must be below the hold temperature less its tolerance (%g C), got %g C", float64(b.Hold)-b.Resolved.Tolerance, float64(b.CoolTo))
	v.expect(float64(b.MaxTemperature) > float64(b.Hold)+b.Resolved.Tolerance, "bake.max_temperature",
		"want a maximum above the hold temperature plus its tolerance (%g C), such as the lowest rating of the parts baked", float64(b.Hold)+b.Resolved.Tolerance)
	v.expect(b.MaxPressure >= 0, "bake.max_pressure", "must not be negative")
	v.expect(b.MaxPressure == 0 || b.Pressure != "", "bake.max_pressure", "a pressure limit needs bake.pressure, the gauge it applies to")
	if b.RateWindow == 0 {
		b.RateWindow = Duration(10 * time.Minute)
	}
	v.expect(b.RateWindow.D() >= time.Minute, "bake.rate_window", "want at least 1 min (a rate over seconds is noise), got %s", b.RateWindow.D())
	if b.Severity == "" {
		b.Severity = "high"
	}
	v.expect(slices.Contains(severities, b.Severity), "bake.severity", "want one of %s, got %q", strings.Join(severities, ", "), b.Severity)
	for i, a := range v.cfg.Alarms {
		for _, n := range BakeAlarmNames {
			v.expect(a == nil || a.Name != n, pathIdx("alarms", i)+".name", "%q is the name of an alarm the bake plan adds; rename this one", n)
		}
	}
}

// bakeDiff parses a temperature difference, def when not set; it must be positive.
func (v *checker) bakeDiff(path string, t Text, def float64) float64 {
	if !t.Set {
		return def
	}
	x, ok := v.difference(path, t, calib.Temperature)
	v.expect(!ok || x > 0, path, "want a positive temperature difference such as 5 C")
	return x
}

func pathIdx(path string, i int) string { return fmt.Sprintf("%s[%d]", path, i) }
