package config

import (
	"slices"
	"strings"

	"holdfast/alerts"
	"holdfast/calib"
)

var severities = []string{"low", "medium", "high", "critical"}

// AlarmConfig is one alarm. Exactly one rule kind is set: a limit (above
// and/or below), rate, rise_watch, stale, fault, disagree, pump_down or
// health. The other keys tune the IEC 62682 state machine.
type AlarmConfig struct {
	Name     string `yaml:"name"`
	Gauge    string `yaml:"gauge"` // not for health alarms
	Severity string `yaml:"severity"`
	// Message is a template: {alarm} {gauge} {value} {limit} {detail}
	// {duration} {severity}.
	Message    string         `yaml:"message"`
	For        Duration       `yaml:"for"`         // on-delay: the condition must hold this long
	ClearAfter Duration       `yaml:"clear_after"` // off-delay: and be gone this long to clear
	Deadband   Text           `yaml:"deadband"`    // limit and rate: "0.5 Pa" or "5%" of the limit
	Chatter    *ChatterConfig `yaml:"chatter"`

	Above Text `yaml:"above"` // a pressure or temperature, by the gauge's kind
	Below Text `yaml:"below"`
	// WaitForNormal arms a limit only once the value has been within it
	// (after a pump-down, say).
	WaitForNormal bool `yaml:"wait_for_normal"`

	Rate      *RateConfig      `yaml:"rate"`
	RiseWatch *RiseWatchConfig `yaml:"rise_watch"`
	Stale     Duration         `yaml:"stale"` // no sample for this long
	Fault     Duration         `yaml:"fault"` // no valid reading (fault, off, no answer) for this long
	Disagree  *DisagreeConfig  `yaml:"disagree"`
	PumpDown  *PumpDownConfig  `yaml:"pump_down"`
	Health    string           `yaml:"health"` // disk_free | store_writes | notify_refused
	HoldTest  *HoldTestConfig  `yaml:"hold_test"`

	Resolved AlarmResolved `yaml:"-"` // SI values, resolved by the checker
}

// ShelvingConfig bounds how long an alarm may be shelved: a shelf always
// ends. Default is how long a shelf asked for without an end lasts
// (critical alarms must be given one); Max is the longest any may last.
type ShelvingConfig struct {
	Default Duration `yaml:"default"` // default 8h
	Max     Duration `yaml:"max"`     // default 24h
}

// shelving fills the shelving defaults and checks them.
func (v *checker) shelving(c *ShelvingConfig) {
	if c.Default == 0 {
		c.Default = Duration(alerts.DefaultShelfLimits.Default)
	}
	if c.Max == 0 {
		c.Max = Duration(max(alerts.DefaultShelfLimits.Max, c.Default.D()))
	}
	v.expect(c.Default > 0, "shelving.default", "must be a positive duration such as 8h, got %s", shortDuration(c.Default.D()))
	v.expect(c.Max >= c.Default, "shelving.max", "must be at least shelving.default (%s), got %s", shortDuration(c.Default.D()), shortDuration(c.Max.D()))
}

// ChatterConfig says when an alarm counts as chattering: Count raises within Window.
type ChatterConfig struct {
	Count  int      `yaml:"count"`
	Window Duration `yaml:"window"`
}

// AlarmResolved is an alarm's limits in SI units, filled in by the checker.
type AlarmResolved struct {
	Kind               string
	Above, Below       float64
	HasAbove, HasBelow bool
	Deadband           float64
	DeadbandRel        bool
	RateAbove, RateBel float64
	HasRateA, HasRateB bool
	Dim                calib.Dimension
}

// AlarmKinds are the rule kinds an alarm may take, as the checker names them.
var AlarmKinds = []string{"above/below", "rate", "rise_watch", "stale", "fault", "disagree", "pump_down", "health", "hold_test"}

func (a *AlarmConfig) kinds() []string {
	var k []string
	limit := (a.Above.Set || a.Below.Set) && a.Health == "" // a health alarm's below is its own
	for i, set := range []bool{limit, a.Rate != nil, a.RiseWatch != nil, a.Stale != 0,
		a.Fault != 0, a.Disagree != nil, a.PumpDown != nil, a.Health != "", a.HoldTest != nil} {
		if set {
			k = append(k, AlarmKinds[i])
		}
	}
	return k
}

func (v *checker) alarm(path string, a *AlarmConfig, seen map[string]int, i int) {
	if a == nil {
		v.problem(path, "empty alarm; want name, gauge and a rule such as above: 10 Pa")
		return
	}
	v.expect(a.Name != "", path+".name", "missing; every alarm needs a name")
	v.expect(!strings.ContainsAny(a.Name, "/ \t"), path+".name", "%q: names may not contain spaces or '/'", a.Name)
	if j, dup := seen[a.Name]; dup && a.Name != "" {
		v.problem(path+".name", "alarm %q is already defined at alarms[%d]", a.Name, j)
	}
	seen[a.Name] = i
	if a.Severity == "" {
		a.Severity = "medium"
	}
	v.expect(slices.Contains(severities, a.Severity), path+".severity", "want one of %s, got %q", strings.Join(severities, ", "), a.Severity)
	v.expect(a.For >= 0, path+".for", "must not be negative")
	v.expect(a.ClearAfter >= 0, path+".clear_after", "must not be negative")
	if c := a.Chatter; c != nil {
		v.expect(c.Count >= 2, path+".chatter.count", "want at least 2 raises, got %d", c.Count)
		v.expect(c.Window > 0, path+".chatter.window", "want a positive window such as 1 min")
	}
	k := a.kinds()
	if len(k) != 1 {
		got := "none"
		if len(k) > 0 {
			got = strings.Join(k, " and ")
		}
		v.problem(path, "want exactly one rule kind (%s), got %s", strings.Join(AlarmKinds, ", "), got)
		return
	}
	a.Resolved.Kind = k[0]
	if a.Resolved.Kind == "health" {
		v.health(path, a)
		return
	}
	g, ok := v.cfg.Gauges[a.Gauge]
	v.expect(ok, path+".gauge", "unknown gauge %q (known: %s)", a.Gauge, knownList(sortedKeys(v.cfg.Gauges)))
	if !ok || g == nil || GaugeDim(g.Kind) == 0 {
		return
	}
	a.Resolved.Dim = GaugeDim(g.Kind)
	v.alarmKind(path, a, g)
}

func (v *checker) alarmKind(path string, a *AlarmConfig, g *GaugeConfig) {
	switch a.Resolved.Kind {
	case "above/below":
		v.limitAlarm(path, a)
	case "rate":
		v.rateAlarm(path, a)
	case "rise_watch":
		v.riseWatch(path, a, g)
	case "stale":
		v.expect(a.Stale > 0, path+".stale", "want a positive time such as 2 min")
	case "fault":
		v.expect(a.Fault > 0, path+".fault", "want a positive time such as 1 min")
	case "disagree":
		v.disagree(path, a, g)
	case "pump_down":
		v.pumpDown(path, a, g)
	case "hold_test":
		v.holdTest(path, a, g)
	}
	if a.Deadband.Set && a.Resolved.Kind != "above/below" && a.Resolved.Kind != "rate" {
		v.problem(path+".deadband", "a deadband applies to limit and rate alarms only")
	}
}

func (v *checker) limitAlarm(path string, a *AlarmConfig) {
	a.Resolved.Above, a.Resolved.HasAbove = v.limit(path+".above", a.Above, a.Resolved.Dim)
	a.Resolved.Below, a.Resolved.HasBelow = v.limit(path+".below", a.Below, a.Resolved.Dim)
	v.expect(!a.Resolved.HasAbove || !a.Resolved.HasBelow || a.Resolved.Below < a.Resolved.Above, path,
		"below must be less than above, or the alarm is always active")
	v.deadband(path, a, a.Resolved.Dim)
}

// deadband reads "0.5 Pa" (absolute, in the gauge's dimension, or a
// temperature difference) or "5%" (of the limit).
func (v *checker) deadband(path string, a *AlarmConfig, dim calib.Dimension) {
	t := a.Deadband
	if !t.Set {
		return
	}
	if strings.HasSuffix(strings.TrimSpace(t.Value), "%") {
		f, ok := calib.ParsePercent(t.Value)
		if !ok || !(f >= 0 && f < 1) {
			v.problem(path+".deadband", "want a percentage from 0 to 100 such as 5%%, got %q", t.Value)
			return
		}
		a.Resolved.Deadband, a.Resolved.DeadbandRel = f, true
		return
	}
	db, ok := v.difference(path+".deadband", t, dim)
	v.expect(!ok || db >= 0, path+".deadband", "must not be negative")
	a.Resolved.Deadband = db
}

// difference parses a quantity that is a difference (a deadband, a rate's
// numerator): for temperatures, 2 F is 2 F of difference, not −16.7 °C.
func (v *checker) difference(path string, t Text, dim calib.Dimension) (float64, bool) {
	x, ok := v.limit(path, t, dim)
	if !ok || dim != calib.Temperature {
		return x, ok
	}
	_, unit, _ := strings.Cut(strings.TrimSpace(t.Value), " ")
	zero, err := calib.Parse("0 "+unit, dim)
	if err != nil {
		return x, ok
	}
	return x - zero, true
}

func (v *checker) limit(path string, t Text, dim calib.Dimension) (float64, bool) {
	if !t.Set {
		return 0, false
	}
	x, err := calib.Parse(t.Value, dim)
	if err != nil {
		v.probs = append(v.probs, Problem{Line: t.Line, Path: path, Msg: err.Error()})
		return 0, false
	}
	return x, true
}

func (v *checker) health(path string, a *AlarmConfig) {
	v.expect(a.Gauge == "", path+".gauge", "a health alarm watches the daemon itself; remove gauge")
	switch a.Health {
	case "disk_free":
		if !a.Below.Set {
			a.Resolved.Below = 0.05
			return
		}
		f, ok := calib.ParsePercent(a.Below.Value)
		if !ok || !(f > 0 && f < 1) {
			v.problem(path+".below", "want the free share of the data disk as a percentage such as 5%%, got %q", a.Below.Value)
		}
		a.Resolved.Below = f
	case "store_writes", "notify_refused":
		v.expect(!a.Below.Set && !a.Above.Set, path, "%s takes no limit", a.Health)
	default:
		v.problem(path+".health", "want disk_free, store_writes or notify_refused, got %q", a.Health)
	}
}
