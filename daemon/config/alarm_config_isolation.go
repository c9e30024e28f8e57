package config

import (
	"strings"
	"time"

	"gopkg.in/yaml.v3"

	"holdfast/alerts"
)

// While says when a rise watch counts the chamber as isolated: "always",
// "api" (POST /api/v1/isolation and hold tests say so), or a state gauge,
// written {gauge: NAME}, that reads 1 while the chamber is isolated (a
// valve-closed switch; invert: true on its Modbus input flips it).
type While struct {
	Mode  string // always, api or gauge
	Gauge string // for Mode gauge
	Line  int
}

// UnmarshalYAML reads always, api or {gauge: NAME}.
func (w *While) UnmarshalYAML(n *yaml.Node) error {
	const want = "want always, api or {gauge: NAME} (a state gauge that reads 1 while the chamber is isolated)"
	switch n.Kind {
	case yaml.ScalarNode:
		*w = While{Mode: n.Value, Line: n.Line}
		return nil
	case yaml.MappingNode:
		for i := 0; i+1 < len(n.Content); i += 2 {
			if k := n.Content[i]; k.Value != "gauge" {
				return typeError(k, "while: unknown key %q; %s", k.Value, want)
			}
		}
		if len(n.Content) != 2 || n.Content[1].Kind != yaml.ScalarNode {
			return typeError(n, "while: %s", want)
		}
		*w = While{Mode: "gauge", Gauge: n.Content[1].Value, Line: n.Line}
		return nil
	}
	return typeError(n, "while: %s", want)
}

// ValveConfig is an isolation valve the daemon closes for a hold test by
// writing one Modbus coil, and puts back as it found it at the end (also
// when the test fails, is aborted, or the daemon stops). holdfast is not an
// interlock: the valve and its controller must be safe in every state of
// the plant, whatever holdfast writes or fails to write.
type ValveConfig struct {
	Link     string   `yaml:"link"`      // a modbus_rtu or modbus_tcp link
	Unit     uint8    `yaml:"unit"`      // Modbus unit; default 1
	Coil     *uint16  `yaml:"coil"`      // 0-based coil address
	ClosedIs string   `yaml:"closed_is"` // on or off: the coil state that closes the valve
	Travel   Duration `yaml:"travel"`    // with confirm: how long the valve may take to close; default 30 s
}

// ScheduleConfig runs hold tests by themselves: every Every, at At (local
// time of the daemon's clock, "03:00") when given. A time missed while the
// daemon was stopped is not made up; one that falls while another hold
// test runs is skipped.
type ScheduleConfig struct {
	Every Duration `yaml:"every"`
	At    string   `yaml:"at"`
}

// schedule returns the schedule in alerts' terms (At parsed by the checker).
func (s *ScheduleConfig) Schedule() alerts.Schedule {
	at, ok := parseClock(s.At)
	return alerts.Schedule{Every: s.Every.D(), At: at, HasAt: ok, Loc: time.Local}
}

// parseClock reads "03:00" or "03:00:30" as a time from midnight.
func parseClock(s string) (time.Duration, bool) {
	for _, layout := range []string{"15:04", "15:04:05"} {
		if t, err := time.Parse(layout, strings.TrimSpace(s)); err == nil {
			return time.Duration(t.Hour())*time.Hour + time.Duration(t.Minute())*time.Minute + time.Duration(t.Second())*time.Second, true
		}
	}
	return 0, false
}

// stateGauge checks that name is a configured state gauge.
func (v *checker) stateGauge(path, name, role string) {
	g, ok := v.cfg.Gauges[name]
	switch {
	case name == "":
		v.problem(path, "name the state gauge that %s", role)
	case !ok || g == nil:
		states := v.gaugesWhere(func(g *GaugeConfig) bool { return g.Kind == "state" })
		if states == nil {
			states = []string{"none yet"}
		}
		v.problem(path, "unknown gauge %q; want a gauge with kind: state that %s (state gauges: %s)", name, role, strings.Join(states, ", "))
	case g.Kind != "state":
		v.problem(path, "%s is a %s gauge; want a gauge with kind: state (a digital input) that %s", name, g.Kind, role)
	}
}

func (v *checker) riseWhile(path string, a *AlarmConfig) {
	w := &a.RiseWatch.While
	switch w.Mode {
	case "":
		w.Mode = "api"
	case "always", "api":
	case "gauge":
		v.stateGauge(path, w.Gauge, "reads 1 while the chamber is isolated")
		v.expect(w.Gauge != a.Gauge, path, "the isolation switch cannot be the watched gauge %s", a.Gauge)
	default:
		v.problem(path, "want always, api or {gauge: NAME}, got %q", w.Mode)
	}
}

// holdIsolation checks how a hold test isolates the chamber: confirm,
// valve and schedule.
func (v *checker) holdIsolation(path string, a *AlarmConfig) {
	h := a.HoldTest
	v.secondHoldTest(path, a)
	if h.Confirm != "" {
		v.stateGauge(path+".confirm", h.Confirm, "reads 1 while the chamber is isolated")
	}
	if h.Valve != nil {
		v.valve(path+".valve", h.Valve, h.Confirm != "")
	}
	if s := h.Schedule; s != nil {
		v.holdSchedule(path+".schedule", h)
	}
}

func (v *checker) valve(path string, c *ValveConfig, confirmed bool) {
	l, ok := v.cfg.Links[c.Link]
	v.expect(ok && l != nil && l.IsModbus(), path+".link", "want a modbus_rtu or modbus_tcp link (modbus links: %s), got %q",
		strings.Join(v.modbusLinks(), ", "), c.Link)
	if ok && l != nil && l.IsModbus() {
		v.expect(len(v.gaugesWhere(func(g *GaugeConfig) bool { return g.Link == c.Link })) > 0, path+".link",
			"link %s carries no gauge, and the daemon opens only links that do; put the valve's confirm switch (or another gauge) on it", c.Link)
	}
	if c.Unit == 0 {
		c.Unit = 1
	}
	v.expect(c.Unit <= 247, path+".unit", "want a Modbus unit from 1 to 247, got %d", c.Unit)
	v.expect(c.Coil != nil, path+".coil", "missing; give the 0-based address of the coil that drives the valve, e.g. coil: 12")
	v.expect(c.ClosedIs == "on" || c.ClosedIs == "off", path+".closed_is",
		"want on or off: the coil state that closes the valve (no default: a wrong guess would open it), got %q", c.ClosedIs)
	switch {
	case c.Travel != 0 && !confirmed:
		v.problem(path+".travel", "travel bounds the wait for confirm; add confirm: (a valve-closed switch) or remove travel")
	case c.Travel < 0:
		v.problem(path+".travel", "must be positive, e.g. travel: 30s")
	case c.Travel == 0:
		c.Travel = Duration(30 * time.Second)
	}
}

func (v *checker) modbusLinks() []string {
	var out []string
	for _, name := range sortedKeys(v.cfg.Links) {
		if l := v.cfg.Links[name]; l != nil && l.IsModbus() {
			out = append(out, name)
		}
	}
	if out == nil {
		out = []string{"none"}
	}
	return out
}

func (v *checker) holdSchedule(path string, h *HoldTestConfig) {
	s := h.Schedule
	_, hasAt := parseClock(s.At)
	if s.At != "" && !hasAt {
		v.problem(path+".at", "want a local time of day such as \"03:00\", got %q", s.At)
	}
	if err := s.Schedule().Validate(); err != nil && s.Every > 0 && (s.At == "" || hasAt) {
		v.problem(path, "%v", err)
	}
	v.expect(s.Every > 0, path+".every", "missing; say how often, e.g. every: 24h")
	long := h.Settle.D() + h.Duration.D()
	if h.Valve != nil && h.Confirm != "" {
		long += h.Valve.Travel.D()
	}
	v.expect(s.Every <= 0 || s.Every.D() > long, path+".every", "a hold test here takes %s (valve travel, settle and duration); runs every %s would overlap",
		shortDuration(long), shortDuration(s.Every.D()))
	v.expect(h.Valve != nil || h.Confirm != "", path,
		"a scheduled hold test needs a valve (a Modbus coil) or confirm (a switch that says the chamber was isolated): no one is there to close the valve")
}

// secondHoldTest reports a hold_test alarm on a gauge that an earlier
// alarm already tests: the settings of hold tests on a gauge (valve,
// schedule, allowed leak) must come from one place.
func (v *checker) secondHoldTest(path string, a *AlarmConfig) {
	for j, b := range v.cfg.Alarms {
		if b == a {
			return
		}
		if b != nil && b.HoldTest != nil && b.Gauge == a.Gauge {
			v.problem(path, "gauge %s already has a hold_test alarm at alarms[%d]; keep one per gauge", a.Gauge, j)
			return
		}
	}
}
