package alerts

import (
	"fmt"
	"math"
	"time"

	"holdfast/calib"
)

// A BakeCheck is one thing a bake plan's alarms watch.
type BakeCheck string

// The checks of a bake plan. Over-temperature holds at any time (a heater
// running away between bakes is as dangerous); the others only while a
// bake runs, and are normal otherwise.
const (
	BakeOverTemperature BakeCheck = "over-temperature" // the hottest watched gauge above the plan's maximum
	BakeHeatingFast     BakeCheck = "heating-fast"     // heating faster than the plan's ramp rate
	BakeCoolingFast     BakeCheck = "cooling-fast"     // cooling faster than the plan's cool-down rate
	BakePressureHigh    BakeCheck = "pressure-high"    // the pressure above the plan's limit during the bake
)

// BakeRule is a bake plan's alarm rule: one check of the tracker's
// state, decided again at every sample of the plan's gauges. Deadband (SI:
// °C, °C/s or Pa) is how far back past the limit the value must come
// before the alarm clears. The tracker is fed the sample before the rule
// sees it (the daemon does that), so the rule reads the newest state.
type BakeRule struct {
	Bake     *Bake
	Check    BakeCheck
	Deadband float64
	Unit     calib.Unit // temperature unit for the temperature checks, pressure unit for the pressure check
}

// Kind returns "bake-" and the check.
func (r *BakeRule) Kind() string { return "bake-" + string(r.Check) }

// Gauges returns the plan's temperature gauges, and its pressure gauge
// for the pressure check.
func (r *BakeRule) Gauges() []string {
	p := r.Bake.Plan()
	g := append([]string(nil), p.Temperatures...)
	if r.Check == BakePressureHigh && p.Pressure != "" {
		g = append(g, p.Pressure)
	}
	return g
}

// Tick decides nothing: the checks depend on samples only.
func (r *BakeRule) Tick(time.Time, bool) Condition { return unknown() }

// Observe judges the check as the tracker stands after s.
func (r *BakeRule) Observe(_ string, s calib.Sample, active bool) Condition {
	return r.Bake.judge(r, s.At, active)
}

func (b *Bake) judge(r *BakeRule, now time.Time, active bool) Condition {
	b.mu.Lock()
	defer b.mu.Unlock()
	if r.Check == BakeOverTemperature {
		v, who := b.lead(now)
		if math.IsNaN(v) || b.plan.MaxTemperature == 0 {
			return unknown()
		}
		return above(v, b.plan.MaxTemperature, r.Deadband, active, r.Unit.Symbol(),
			calib.Format(v, r.Unit), calib.Format(b.plan.MaxTemperature, r.Unit), who+" reads %s, above the plan's maximum of %s", "within the plan's maximum")
	}
	if !b.rec.Running() {
		c := unknown()
		c.Known, c.Detail = true, "no bake running"
		return c
	}
	switch r.Check {
	case BakeHeatingFast, BakeCoolingFast:
		v, limit, verb := b.heat, b.plan.RampUp, "heating"
		if r.Check == BakeCoolingFast {
			v, limit, verb = b.cool, b.plan.CoolDown, "cooling"
		}
		if math.IsNaN(v) || limit == 0 {
			return unknown()
		}
		win := b.plan.RateWindow.String()
		return above(v, limit, r.Deadband, active, "C/min", perMinute(v), perMinute(limit),
			verb+" at %s over the last "+win+", faster than the plan's %s", verb+" within the plan's rate")
	case BakePressureHigh:
		s := b.pressure
		if !b.havePress || b.plan.MaxPressure == 0 {
			return unknown()
		}
		switch s.Quality {
		case calib.QualityOK:
		case calib.QualityOverRange:
			c := Condition{Known: true, Active: true, Value: math.NaN(), Limit: b.plan.MaxPressure, Unit: r.Unit.Symbol(),
				ValueText: "over-range", LimitText: calib.Format(b.plan.MaxPressure, r.Unit)}
			c.Detail = "pressure over the gauge's range during the bake, above the plan's limit of " + c.LimitText
			return c
		default:
			return unknown()
		}
		return above(s.Value, b.plan.MaxPressure, r.Deadband, active, r.Unit.Symbol(), calib.Format(s.Value, r.Unit),
			calib.Format(b.plan.MaxPressure, r.Unit), "pressure %s during the bake, above the plan's limit of %s", "pressure within the plan's limit")
	}
	return unknown()
}

// above is the condition of a value held against an upper limit, with the
// deadband applied on the way out.
func above(v, limit, deadband float64, active bool, unit, vText, lText, activeFormat, normal string) Condition {
	db := 0.0
	if active {
		db = deadband
	}
	c := Condition{Known: true, Value: v, Limit: limit, Unit: unit, ValueText: vText, LimitText: lText}
	c.Active = v > limit || active && v > limit-db
	c.Detail = normal + " (" + vText + ")"
	if c.Active {
		c.Detail = fmt.Sprintf(activeFormat, vText, lText)
	}
	return c
}

// perMinute shows a temperature rate (°C/s) per minute; a difference of
// temperature is the same in °C and K, so rates always show in °C.
func perMinute(perSecond float64) string { return fmt.Sprintf("%.3g C/min", perSecond*60) }
