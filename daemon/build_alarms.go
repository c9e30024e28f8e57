package daemon

import (
	"math"

	"holdfast/alerts"
	"holdfast/calib"
	"holdfast/daemon/config"
)

// limits turns the config's alarms into the engine's alarms. (The name is
// the seam daemon.New calls.)
func (d *Daemon) limits() []*alerts.Alarm {
	var out []*alerts.Alarm
	for _, a := range d.conf().Alarms {
		out = append(out, d.configAlarm(a))
	}
	return append(out, d.bakeAlarms()...)
}

// configAlarm builds the engine's alarm for one configured alarm.
func (d *Daemon) configAlarm(a *config.AlarmConfig) *alerts.Alarm {
	al := &alerts.Alarm{Name: a.Name, Gauge: a.Gauge, Severity: alerts.Severity(a.Severity), Message: a.Message,
		OnDelay: a.For.D(), OffDelay: a.ClearAfter.D(), Rule: d.rule(a)}
	if a.Health != "" {
		al.Gauge = "holdfast"
	}
	if c := a.Chatter; c != nil {
		al.ChatterCount, al.ChatterWindow = c.Count, c.Window.D()
	}
	return al
}

func (d *Daemon) gaugeUnit(name string) calib.Unit {
	g := d.conf().Gauges[name]
	if g == nil {
		return calib.Unit{}
	}
	u, _ := calib.ParseUnit(g.Unit, config.GaugeDim(g.Kind))
	return u
}

func (d *Daemon) rule(a *config.AlarmConfig) alerts.Rule {
	unit := d.gaugeUnit(a.Gauge)
	r := a.Resolved
	switch r.Kind {
	case "rate":
		return &alerts.Rate{Gauge: a.Gauge, Window: a.Rate.Window.D(), Above: ifSet(r.RateAbove, r.HasRateA),
			Below: ifSet(r.RateBel, r.HasRateB), Deadband: r.Deadband, Unit: unit}
	case "rise_watch":
		rw := a.RiseWatch
		u, _ := calib.ParseUnit(rw.Unit, calib.Throughput)
		return &alerts.RiseWatch{Gauge: a.Gauge, Window: rw.Window.D(), Every: rw.Every.D(), MaxLeak: float64(rw.MaxLeak),
			Volume: float64(d.conf().Chamber.Volume), Options: alerts.RiseOptions{VolumeUncertainty: float64(d.conf().Chamber.VolumeUncertainty) / alerts.CoverageK},
			Always: rw.While.Mode == "always", IsolatedBy: rw.While.Gauge, Unit: u}
	case "stale":
		return &alerts.Stale{Gauge: a.Gauge, After: a.Stale.D()}
	case "fault":
		return &alerts.Fault{Gauge: a.Gauge, After: a.Fault.D()}
	case "disagree":
		return &alerts.Disagree{Gauge: a.Gauge, With: a.Disagree.With, Factor: a.Disagree.Factor, Diff: r.Deadband,
			MaxSkew: a.Disagree.Skew.D(), Unit: unit}
	case "pump_down":
		p := a.PumpDown
		return &alerts.PumpDeadline{Gauge: a.Gauge, Start: float64(p.Start), Target: float64(p.Target), Within: p.Within.D(),
			Guide: alerts.PumpDown{Volume: float64(d.conf().Chamber.Volume), Speed: float64(p.Speed)}, Unit: unit}
	case "hold_test":
		u, _ := calib.ParseUnit(a.HoldTest.Unit, calib.Throughput)
		return &alerts.HoldTest{Gauge: a.Gauge, Allowed: float64(a.HoldTest.AllowedLeak), Unit: u}
	case "health":
		switch a.Health {
		case "disk_free":
			return &alerts.Health{Check: alerts.HealthDiskFree, Below: r.Below}
		case "notify_refused":
			return &alerts.Health{Check: alerts.HealthNotifyRefused}
		}
		return &alerts.Health{Check: alerts.HealthStoreWrites}
	}
	l := &alerts.Limit{Gauge: a.Gauge, Above: ifSet(r.Above, r.HasAbove), Below: ifSet(r.Below, r.HasBelow),
		Deadband: r.Deadband, Unit: unit, WaitForNormal: a.WaitForNormal}
	if r.DeadbandRel {
		ref := l.Above
		if math.IsNaN(ref) {
			ref = l.Below
		}
		l.Deadband = r.Deadband * math.Abs(ref)
	}
	return l
}

func ifSet(v float64, ok bool) float64 {
	if !ok {
		return math.NaN()
	}
	return v
}
