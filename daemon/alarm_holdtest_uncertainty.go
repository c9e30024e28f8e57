package daemon

import (
	"fmt"
	"slices"
	"strconv"

	"holdfast/alerts"
	"holdfast/calib"
)

// riseUncertainties returns the options that carry the gauge's scale and
// the volume's uncertainty into the analysis of a hold test on gauge over
// the pressures ps, and a note saying what the stated interval takes in
// and what it leaves out.
//
// The scale is the active calibration's relative expanded uncertainty,
// the larger of those at the record's lowest and highest pressure, over
// its coverage factor: all of it is treated as a scale error, which a
// rate of rise keeps in full (an offset would cancel), so the figure errs
// on the safe side. The caller holds liveMu.
func (d *Daemon) riseUncertainties(gauge string, ps []float64) (alerts.RiseOptions, string) {
	var opt alerts.RiseOptions
	var in, out []string
	scale, why := d.gaugeScale(gauge, ps)
	if why == "" {
		opt.ScaleUncertainty = scale
		in = append(in, fmt.Sprintf("the gauge's scale (its calibration: %.2g %% at k = %g)", 100*alerts.CoverageK*scale, alerts.CoverageK))
	} else {
		out = append(out, "the gauge's scale ("+why+"; the instrument's own accuracy comes on top)")
	}
	if u := float64(d.conf().Chamber.VolumeUncertainty); u > 0 {
		opt.VolumeUncertainty = u / alerts.CoverageK
		in = append(in, fmt.Sprintf("the volume (chamber.volume_uncertainty: %.2g %% at k = %g)", 100*u, alerts.CoverageK))
	} else {
		out = append(out, "the volume's (set chamber.volume_uncertainty)")
	}
	return opt, alerts.IntervalNote(in, out)
}

// gaugeScale returns the relative standard uncertainty of gauge's pressure
// scale over ps under its active calibration, or why none is known.
func (d *Daemon) gaugeScale(gauge string, ps []float64) (float64, string) {
	g := d.gaugeNamed(gauge)
	if g == nil || len(ps) == 0 {
		return 0, "no record to judge it by"
	}
	g.mu.Lock()
	t, id := g.transfer, g.calID
	g.mu.Unlock()
	ext, ok := t.(calib.Extended)
	if !ok || id == 0 || ext.Cal == nil {
		return 0, "no calibration is active"
	}
	u := ext.Cal.Uncertainty
	k := u.K
	if !(k > 0) {
		k = alerts.CoverageK
	}
	lo, hi := slices.Min(ps), slices.Max(ps)
	var worst float64
	for _, p := range []float64{lo, hi} {
		U, in := u.At(p)
		if !in {
			return 0, fmt.Sprintf("calibration %d states no uncertainty at %s", id, strconv.FormatFloat(p, 'g', 3, 64)+" Pa")
		}
		worst = max(worst, U)
	}
	if worst/k >= 0.5 {
		return 0, fmt.Sprintf("calibration %d states %.3g %% at k = %g at these pressures, too coarse to carry into a rate", id, 100*worst, k)
	}
	return worst / k, ""
}
