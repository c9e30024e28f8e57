package config

import (
	"cmp"
	"fmt"
	"math"
	"slices"
	"strings"
	"time"

	"gopkg.in/yaml.v3"

	"holdfast/calib"
)

// MemberRanges gives each member of a combined gauge the pressures it is
// trusted over: ranges: {chamber-tc: [0.5 Pa, 5 kPa], chamber-ion: [1e-7 Pa, 1 Pa]}.
type MemberRanges map[string]PressureSpan

// PressureSpan is a [low, high] pair of pressures, low < high, both above zero.
type PressureSpan struct{ Low, High float64 }

// UnmarshalYAML reads [low, high] with units.
func (s *PressureSpan) UnmarshalYAML(n *yaml.Node) error {
	if n.Kind != yaml.SequenceNode || len(n.Content) != 2 {
		return typeError(n, "want [low, high] with units, e.g. [0.5 Pa, 5 kPa]")
	}
	var lo, hi Pressure
	if err := lo.UnmarshalYAML(n.Content[0]); err != nil {
		return err
	}
	if err := hi.UnmarshalYAML(n.Content[1]); err != nil {
		return err
	}
	*s = PressureSpan{float64(lo), float64(hi)}
	return nil
}

// combined checks a virtual gauge: two or more pressure gauges, each with
// a range, the ranges overlapping so that some member is trusted at every
// pressure from the lowest low to the highest high. It fills the interval
// and timeout from the members, so staleness works as for a polled gauge.
func (v *checker) combined(name string, g *GaugeConfig) {
	path := "gauges." + name
	v.expect(len(g.Combine) >= 2, path+".combine", "a combined gauge needs two or more members, got %d", len(g.Combine))
	v.expect(g.Link == "" && g.Driver == "", path, "a combined gauge has no link or driver of its own; remove them (its members are polled)")
	v.expect(g.Calibration == nil, path+".calibration", "a combined gauge has no raw signal to calibrate; calibrate its members")
	v.expect(g.Ambient == nil, path+".ambient", "a combined gauge has no raw signal to correct; put ambient: on its members")
	v.expect(g.Interval == 0 && g.Timeout == 0, path, "a combined gauge is updated whenever a member reads; remove interval and timeout (set them on the members)")
	if g.Kind == "" {
		g.Kind = "pressure"
	}
	v.expect(g.Kind == "pressure", path+".kind", "a combined gauge blends pressures; want kind: pressure, got %q", g.Kind)
	if g.Unit == "" {
		g.Unit = "Pa"
	} else if _, err := calib.ParseUnit(g.Unit, calib.Pressure); err != nil {
		v.problem(path+".unit", "%v", err)
	}
	var spans []PressureSpan
	var iv, to time.Duration
	for i, m := range g.Combine {
		mp := fmt.Sprintf("%s.combine[%d]", path, i)
		mc, ok := v.cfg.Gauges[m]
		switch {
		case !ok || mc == nil:
			v.problem(mp, "unknown gauge %q (known: %s)", m, knownList(v.gaugesWhere(func(c *GaugeConfig) bool { return len(c.Combine) == 0 })))
			continue
		case len(mc.Combine) > 0:
			v.problem(mp, "%q is itself a combined gauge; list its members here instead", m)
			continue
		case mc.Kind != "pressure":
			v.problem(mp, "%q measures %s; only pressure gauges can be combined", m, mc.Kind)
		case slices.Index(g.Combine, m) != i:
			v.problem(mp, "%q is listed twice", m)
		}
		iv, to = max(iv, or(mc.Interval.D(), DefaultInterval)), max(to, or(mc.Timeout.D(), min(or(mc.Interval.D(), DefaultInterval), 2*time.Second)))
		s, ok := g.Ranges[m]
		if !ok {
			v.problem(path+".ranges", "no range for %q; give each member the pressures it is trusted over, e.g. ranges: {%s: [0.5 Pa, 5 kPa]}", m, m)
			continue
		}
		if err := (calib.Span{Low: s.Low, High: s.High}).Validate(); err != nil {
			v.problem(path+".ranges."+m, "%v", err)
			continue
		}
		spans = append(spans, s)
	}
	for _, k := range sortedKeys(g.Ranges) {
		v.expect(slices.Contains(g.Combine, k), path+".ranges."+k, "%q is not a member (combine: [%s])", k, strings.Join(g.Combine, ", "))
	}
	v.coverage(path+".ranges", spans)
	g.Interval, g.Timeout = Duration(iv), Duration(to)
}

// coverage reports a pressure no member is trusted at.
func (v *checker) coverage(path string, spans []PressureSpan) {
	slices.SortFunc(spans, func(a, b PressureSpan) int { return cmp.Compare(a.Low, b.Low) })
	reach := 0.0
	for i, s := range spans {
		if i > 0 && s.Low >= reach {
			v.problem(path, "no member is trusted between %s and %s; widen the ranges so each overlaps the next (the blend moves smoothly across each overlap)",
				calib.Format(reach, calib.Pressure.Base()), calib.Format(s.Low, calib.Pressure.Base()))
			return
		}
		reach = math.Max(reach, s.High)
	}
}

// or returns d, or def when d is 0.
func or(d, def time.Duration) time.Duration {
	if d == 0 {
		return def
	}
	return d
}
