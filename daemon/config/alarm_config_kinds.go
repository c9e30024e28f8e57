package config

import (
	"strings"
	"time"

	"holdfast/calib"
)

// RateConfig is a rate alarm: the gauge's change per unit time over a
// window, e.g. above: 2 C/min (a bake ramp) or above: 0.1 Pa/min.
type RateConfig struct {
	Above  Text     `yaml:"above"`
	Below  Text     `yaml:"below"`
	Window Duration `yaml:"window"` // default 5 min
}

// RiseWatchConfig is the continuous leak analysis on a sliding window.
type RiseWatchConfig struct {
	Window  Duration   `yaml:"window"`   // default 10 min
	Every   Duration   `yaml:"every"`    // analyse this often; default window/20
	MaxLeak Throughput `yaml:"max_leak"` // the leak rate that raises the alarm
	// While says when the chamber counts as isolated: always, api (POST
	// /api/v1/isolation, hold tests) or {gauge: NAME} (a state gauge that
	// reads 1 while isolated). Default api.
	While While  `yaml:"while"`
	Unit  string `yaml:"unit"` // leak-rate unit for messages; default mbar*L/s
}

// DisagreeConfig compares the alarm's gauge with another one.
type DisagreeConfig struct {
	With   string   `yaml:"with"`
	Factor float64  `yaml:"factor"` // pressures: the larger over the smaller, e.g. 2
	By     Text     `yaml:"by"`     // temperatures: a difference, e.g. 5 C
	Skew   Duration `yaml:"skew"`   // readings further apart are not compared; default 1 min
}

// PumpDownConfig is a pump-down deadline.
type PumpDownConfig struct {
	Target Pressure `yaml:"target"`
	Within Duration `yaml:"within"`
	Start  Pressure `yaml:"start"` // pumping has begun once below this; default 900 mbar
	Speed  Speed    `yaml:"speed"` // effective pumping speed, for the expected time; optional
}

func (v *checker) rateAlarm(path string, a *AlarmConfig) {
	r := a.Rate
	if r.Window == 0 {
		r.Window = Duration(5 * time.Minute)
	}
	v.expect(r.Window > 0, path+".rate.window", "want a positive window such as 5 min")
	a.Resolved.RateAbove, a.Resolved.HasRateA = v.rate(path+".rate.above", r.Above, a.Resolved.Dim)
	a.Resolved.RateBel, a.Resolved.HasRateB = v.rate(path+".rate.below", r.Below, a.Resolved.Dim)
	v.expect(r.Above.Set || r.Below.Set, path+".rate", "say when it fires: above or below a rate such as 2 C/min")
	v.deadband(path, a, a.Resolved.Dim)
	if a.Resolved.DeadbandRel {
		v.problem(path+".deadband", "a rate deadband is a rate difference such as 0.5 C/min, not a percentage")
	}
}

// rate parses "2 C/min" or "1e-3 Pa/s" into SI per second.
func (v *checker) rate(path string, t Text, dim calib.Dimension) (float64, bool) {
	if !t.Set {
		return 0, false
	}
	i := strings.LastIndex(t.Value, "/")
	if i < 0 {
		v.probs = append(v.probs, Problem{Line: t.Line, Path: path, Msg: "want a rate such as 2 C/min or 0.1 Pa/min, got " + t.Value})
		return 0, false
	}
	per, err := calib.ParseDuration("1 " + strings.TrimSpace(t.Value[i+1:]))
	if err != nil || per <= 0 {
		v.probs = append(v.probs, Problem{Line: t.Line, Path: path, Msg: "rate per what? want /s, /min or /h, got " + t.Value})
		return 0, false
	}
	x, ok := v.difference(path, Text{Value: t.Value[:i], Line: t.Line, Set: true}, dim)
	return x / per.Seconds(), ok
}

func (v *checker) riseWatch(path string, a *AlarmConfig, g *GaugeConfig) {
	r := a.RiseWatch
	v.expect(g.Kind == "pressure", path+".gauge", "a rise watch needs a pressure gauge, %s measures %s", a.Gauge, g.Kind)
	if r.Window == 0 {
		r.Window = Duration(10 * time.Minute)
	}
	v.expect(r.Window.D() >= 30*time.Second, path+".rise_watch.window", "want at least 30 s (a rise needs minutes to tell a leak from outgassing)")
	v.expect(r.MaxLeak > 0, path+".rise_watch.max_leak", "missing or not positive; e.g. max_leak: 1e-5 mbar*L/s")
	v.riseWhile(path+".rise_watch.while", a)
	if r.Unit == "" {
		r.Unit = "mbar*L/s"
	}
	if _, err := calib.ParseUnit(r.Unit, calib.Throughput); err != nil {
		v.problem(path+".rise_watch.unit", "%v", err)
	}
}

func (v *checker) disagree(path string, a *AlarmConfig, g *GaugeConfig) {
	d := a.Disagree
	o, ok := v.cfg.Gauges[d.With]
	v.expect(ok && d.With != a.Gauge, path+".disagree.with", "want another gauge (known: %s), got %q", strings.Join(sortedKeys(v.cfg.Gauges), ", "), d.With)
	if ok && o != nil {
		v.expect(o.Kind == g.Kind, path+".disagree.with", "%s measures %s, %s measures %s: nothing to compare", a.Gauge, g.Kind, d.With, o.Kind)
	}
	if g.Kind == "pressure" {
		v.expect(d.Factor > 1, path+".disagree.factor", "want a ratio above 1 such as 2 (pressure gauges of different kinds agree within tens of percent)")
		v.expect(!d.By.Set, path+".disagree.by", "pressures are compared by factor, not by a difference")
		return
	}
	v.expect(d.Factor == 0, path+".disagree.factor", "temperatures are compared by a difference (by: 5 C), not a factor")
	x, ok := v.difference(path+".disagree.by", d.By, calib.Temperature)
	v.expect(d.By.Set, path+".disagree.by", "want a temperature difference such as 5 C")
	v.expect(!ok || x > 0, path+".disagree.by", "must be positive")
	a.Resolved.Deadband = x // reused: the allowed difference
}

func (v *checker) pumpDown(path string, a *AlarmConfig, g *GaugeConfig) {
	p := a.PumpDown
	v.expect(g.Kind == "pressure", path+".gauge", "a pump-down deadline needs a pressure gauge, %s measures %s", a.Gauge, g.Kind)
	if p.Start == 0 {
		p.Start = 90000
	}
	v.expect(p.Target > 0, path+".pump_down.target", "missing or not positive; e.g. target: 1e-3 Pa")
	v.expect(p.Within > 0, path+".pump_down.within", "missing or not positive; e.g. within: 2h")
	v.expect(p.Target < p.Start, path+".pump_down.target", "must be below start (%g Pa)", float64(p.Start))
	v.expect(p.Speed >= 0, path+".pump_down.speed", "must not be negative")
}

// HoldTestConfig is a hold-test alarm: it is raised when a hold test on the
// gauge finds a leak rate above the chamber's allowed leak rate, and sets
// the defaults for hold tests on that gauge.
type HoldTestConfig struct {
	AllowedLeak Throughput `yaml:"allowed_leak"`
	Settle      Duration   `yaml:"settle"`   // wait after isolating; default 2 min
	Duration    Duration   `yaml:"duration"` // record this long; default 10 min
	Unit        string     `yaml:"unit"`     // leak-rate unit for messages; default mbar*L/s
	// Confirm names a state gauge that reads 1 while the chamber is
	// isolated: a test does not start while it reads open, and fails if
	// it opens during the test. With a valve, the test waits (up to the
	// valve's travel) for it after closing the valve.
	Confirm  string          `yaml:"confirm"`
	Valve    *ValveConfig    `yaml:"valve"`    // none: isolation is manual (the default)
	Schedule *ScheduleConfig `yaml:"schedule"` // none: tests start from the API or the CLI only
}

func (v *checker) holdTest(path string, a *AlarmConfig, g *GaugeConfig) {
	h := a.HoldTest
	v.expect(g.Kind == "pressure", path+".gauge", "a hold test needs a pressure gauge, %s measures %s", a.Gauge, g.Kind)
	v.expect(h.AllowedLeak > 0, path+".hold_test.allowed_leak", "missing or not positive; e.g. allowed_leak: 1e-6 mbar*L/s")
	if h.Settle == 0 {
		h.Settle = Duration(2 * time.Minute)
	}
	if h.Duration == 0 {
		h.Duration = Duration(10 * time.Minute)
	}
	v.expect(h.Settle >= 0, path+".hold_test.settle", "must not be negative")
	v.expect(h.Duration.D() >= 30*time.Second, path+".hold_test.duration", "want at least 30 s of record")
	if h.Unit == "" {
		h.Unit = "mbar*L/s"
	}
	if _, err := calib.ParseUnit(h.Unit, calib.Throughput); err != nil {
		v.problem(path+".hold_test.unit", "%v", err)
	}
	v.holdIsolation(path+".hold_test", a)
}
