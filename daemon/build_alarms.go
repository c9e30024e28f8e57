package daemon

import (
	"math"

	"holdfast/alerts"
	"holdfast/calib"
)

// limits turns the config's alarms into rules.
func (d *Daemon) limits() []*alerts.Limit {
	var out []*alerts.Limit
	for _, a := range d.cfg.Alarms {
		g := d.cfg.Gauges[a.Gauge]
		unit, _ := calib.ParseUnit(g.Unit, gaugeDim(g.Kind))
		l := &alerts.Limit{Name: a.Name, Gauge: a.Gauge, Above: math.NaN(), Below: math.NaN(),
			OnDelay: a.For.D(), Severity: alerts.Severity(a.Severity), Unit: unit, WaitForNormal: a.WaitForNormal}
		if a.hasAbove {
			l.Above = a.above
		}
		if a.hasBelow {
			l.Below = a.below
		}
		out = append(out, l)
	}
	return out
}
