package daemon

import (
	"errors"
	"fmt"
	"log/slog"
	"math"
	"slices"
	"strings"

	"holdfast/calib"
	"holdfast/daemon/store"
)

// buildCombined builds the virtual gauges. Each is a *gauge with no driver
// and no link, appended to d.gauges so the metrics, the API and the store
// treat it like any other; its samples are stored under its own name.
func (d *Daemon) buildCombined() error {
	var errs []error
	cfg := d.conf()
	for _, name := range sortedKeys(cfg.Gauges) {
		gc := cfg.Gauges[name]
		if len(gc.Combine) == 0 {
			continue
		}
		unit, err := calib.ParseUnit(gc.Unit, calib.Pressure)
		if err != nil {
			errs = append(errs, fmt.Errorf("gauge %s: %w", name, err))
			continue
		}
		vg := &gauge{name: name, cfg: gc, dim: calib.Pressure, unit: unit, transfer: calib.Identity{}}
		live := vg.liveState()
		for _, m := range gc.Combine {
			mg := d.gaugeNamed(m)
			if mg == nil {
				errs = append(errs, fmt.Errorf("gauge %s: member %s was not built", name, m))
				break
			}
			r := gc.Ranges[m]
			live.members = append(live.members, mg)
			live.spans = append(live.spans, calib.Span{Low: r.Low, High: r.High})
		}
		if len(live.members) != len(gc.Combine) {
			continue
		}
		for _, mg := range live.members {
			mg.liveState().feeds = append(mg.liveState().feeds, vg)
		}
		d.gauges = append(d.gauges, vg)
	}
	slices.SortFunc(d.gauges, func(a, b *gauge) int { return strings.Compare(a.name, b.name) })
	return errors.Join(errs...)
}

// combineAfter updates the virtual gauges that g feeds after its sample s.
func (d *Daemon) combineAfter(log *slog.Logger, g *gauge, s calib.Sample) {
	if g.live == nil {
		return
	}
	for _, vg := range g.live.feeds {
		d.updateCombined(log, vg)
	}
}

// updateCombined blends vg's members and passes the result down the
// pipeline, one update at a time and never older than the last one.
func (d *Daemon) updateCombined(log *slog.Logger, vg *gauge) {
	vg.live.blendMu.Lock()
	defer vg.live.blendMu.Unlock()
	c := d.blend(vg)
	if prev := vg.view(c.At); prev.seen && !c.At.After(prev.last.At) {
		return // a member's newer sample was blended already
	}
	res := d.store.Resolution()
	if p := vg.live.pending; p != nil && laterStored(c.At, p.At, res) {
		d.store.Append(vg.name, blendPoint(*p))
	}
	vg.live.pending = &c // a later blend of the same stored time replaces it
	d.record(log, vg, c)
	for _, ev := range d.alarms.Observe(vg.name, c) {
		d.alarmEvent(log, ev)
	}
}

func blendPoint(c calib.Sample) store.Point {
	return store.Point{At: c.At, Raw: c.Raw, Value: c.Value, Quality: uint8(c.Quality)}
}

// flushBlends stores every combined gauge's pending blend: at the end of
// Run, and for the gauges a reload replaces.
func flushBlends(db *store.DB, gauges []*gauge) {
	for _, vg := range gauges {
		if vg.live == nil || len(vg.live.members) == 0 {
			continue
		}
		vg.live.blendMu.Lock()
		if p := vg.live.pending; p != nil {
			db.Append(vg.name, blendPoint(*p))
			vg.live.pending = nil
		}
		vg.live.blendMu.Unlock()
	}
}

// blend merges the members' last samples. A member that is down or stale
// does not count. When no member is in range, the result says why: over-
// or under-range if a member says so (a gauge at atmosphere above the
// top member's range), off if every member is off, else a sensor fault.
func (d *Daemon) blend(vg *gauge) calib.Sample {
	now := d.clock.Now()
	live := vg.live
	samples := make([]calib.Sample, len(live.members))
	for i, m := range live.members {
		v := m.view(now)
		samples[i] = calib.Sample{At: v.last.At, Raw: v.last.Raw, Value: v.last.Value, Quality: calib.QualitySensorFault}
		if v.seen && v.up && !v.stale {
			samples[i].Quality = v.last.Quality
		}
	}
	out, err := calib.Blend(live.spans, samples)
	if out.At.IsZero() {
		out.At = now
	}
	if errors.Is(err, calib.ErrNoMember) {
		out.Quality = noMemberQuality(samples)
	}
	if !out.Quality.HasValue() {
		out.Value = math.NaN()
	}
	return out
}

// noMemberQuality explains a blend with no usable member.
func noMemberQuality(samples []calib.Sample) calib.Quality {
	has := map[calib.Quality]bool{}
	for _, s := range samples {
		has[s.Quality] = true
	}
	switch {
	case has[calib.QualityOverRange]:
		return calib.QualityOverRange
	case has[calib.QualityUnderRange]:
		return calib.QualityUnderRange
	case len(has) == 1 && has[calib.QualityOff]:
		return calib.QualityOff
	}
	return calib.QualitySensorFault
}
