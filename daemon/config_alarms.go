package daemon

import (
	"slices"
	"strings"

	"holdfast/calib"
)

var severities = []string{"low", "medium", "high", "critical"}

// AlarmConfig is one alarm rule.
type AlarmConfig struct {
	Name     string   `yaml:"name"`
	Gauge    string   `yaml:"gauge"`
	Above    Text     `yaml:"above"` // a pressure or temperature, by the gauge's kind
	Below    Text     `yaml:"below"`
	For      Duration `yaml:"for"` // on-delay: the condition must hold this long
	Severity string   `yaml:"severity"`
	// WaitForNormal arms the alarm only once the value has been within its
	// limits (after a pump-down, say).
	WaitForNormal bool `yaml:"wait_for_normal"`

	above, below float64 // SI, resolved by the checker
	hasAbove     bool
	hasBelow     bool
}

func (v *checker) alarm(path string, a *AlarmConfig, seen map[string]int, i int) {
	if a == nil {
		v.problem(path, "empty alarm; want name, gauge and a limit")
		return
	}
	v.expect(a.Name != "", path+".name", "missing; every alarm needs a name")
	if j, dup := seen[a.Name]; dup && a.Name != "" {
		v.problem(path+".name", "alarm %q is already defined at alarms[%d]", a.Name, j)
	}
	seen[a.Name] = i
	g, ok := v.cfg.Gauges[a.Gauge]
	v.expect(ok, path+".gauge", "unknown gauge %q (known: %s)", a.Gauge, strings.Join(sortedKeys(v.cfg.Gauges), ", "))
	v.expect(a.Above.Set || a.Below.Set, path, "say when it fires: above or below a limit")
	if a.Severity == "" {
		a.Severity = "medium"
	}
	v.expect(slices.Contains(severities, a.Severity), path+".severity", "want one of %s, got %q", strings.Join(severities, ", "), a.Severity)
	v.expect(a.For >= 0, path+".for", "must not be negative")
	if !ok || g == nil || gaugeDim(g.Kind) == 0 {
		return
	}
	a.above, a.hasAbove = v.limit(path+".above", a.Above, gaugeDim(g.Kind))
	a.below, a.hasBelow = v.limit(path+".below", a.Below, gaugeDim(g.Kind))
	v.expect(!a.hasAbove || !a.hasBelow || a.below < a.above, path,
		"below must be less than above, or the alarm is always active")
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
