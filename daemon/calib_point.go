package daemon

import (
	"errors"
	"fmt"
	"math"
	"time"

	"holdfast/calib"
	"holdfast/daemon/calibstore"
	"holdfast/daemon/config"
	"holdfast/daemon/store"
)

// pointRequest asks for one calibration point: the gauge's raw signal
// averaged over the window ending At, paired with exactly one reference.
type pointRequest struct {
	Gauge          string                 `json:"gauge"`
	Reference      *float64               `json:"reference_pa,omitempty"`    // an absolute pressure read off the reference
	ColumnHeight   *float64               `json:"column_height_m,omitempty"` // a closed-top column's height, in the gauge's reference liquid
	Fluid          *config.ReferenceFluid `json:"fluid,omitempty"`           // overrides the config's reference_fluid for this point
	ReferenceGauge string                 `json:"reference_gauge,omitempty"` // another gauge, averaged over the same window
	WindowSeconds  float64                `json:"window_seconds,omitempty"`  // default 60
	MaxDrift       float64                `json:"max_drift,omitempty"`       // relative change allowed over the window; default 0.005
	At             time.Time              `json:"at,omitzero"`               // end of the window; default now
	Note           string                 `json:"note,omitempty"`
}

// window is one gauge's samples over a point's window.
type window struct {
	t, raw, value []float64 // value only when every sample is QualityOK
	skipped       int       // sensor-fault and off samples left out
}

// readWindow collects g's stored samples in [from, to); samples with a
// sensor fault or the sensor off are left out (their raw signal means nothing).
func (d *Daemon) readWindow(g *gauge, from, to time.Time) (window, error) {
	var w window
	allOK := true
	err := d.store.Range(g.name, from, to, func(p store.Point) bool {
		q := calib.Quality(p.Quality)
		if q == calib.QualitySensorFault || q == calib.QualityOff || math.IsNaN(p.Raw) {
			w.skipped++
			return true
		}
		w.t = append(w.t, p.At.Sub(from).Seconds())
		w.raw = append(w.raw, p.Raw)
		w.value = append(w.value, p.Value)
		allOK = allOK && q == calib.QualityOK
		return true
	})
	if !allOK {
		w.value = nil
	}
	return w, err
}

// takePoint averages req.Gauge over the window, refuses if it (or a
// reference gauge) is still drifting, resolves the reference and stores
// the pair.
func (d *Daemon) takePoint(req pointRequest) (calibstore.Point, error) {
	g, err := d.calibratable(req.Gauge)
	if err != nil {
		return calibstore.Point{}, err
	}
	win := defaultPointWindow
	if req.WindowSeconds != 0 {
		win = time.Duration(req.WindowSeconds * float64(time.Second))
	}
	limit := req.MaxDrift
	if limit == 0 {
		limit = defaultMaxDrift
	}
	now := d.clock.Now()
	at := req.At
	if at.IsZero() {
		at = now
	}
	switch {
	case win < time.Second || win > 24*time.Hour:
		return calibstore.Point{}, fmt.Errorf("window %s: choose 1 s to 24 h", win)
	case !(limit > 0 && limit < 1):
		return calibstore.Point{}, fmt.Errorf("max drift %g: want a fraction above 0 and below 1, e.g. 0.005 for 0.5 %%", limit)
	case at.After(now):
		return calibstore.Point{}, fmt.Errorf("window end %s is after the daemon's clock (%s)", at.Format(time.RFC3339), now.Format(time.RFC3339))
	}
	st, w, err := d.steady(g, at.Add(-win), at, win, limit)
	if err != nil {
		return calibstore.Point{}, err
	}
	ref, source, err := d.reference(g, req, at.Add(-win), at, win, limit)
	if err != nil {
		return calibstore.Point{}, err
	}
	raw := analyse(w.t, w.raw, win.Seconds())
	p := calibstore.Point{Gauge: g.name, Raw: raw.mean, Reference: ref, Source: source, Taken: at, Window: win,
		Samples: raw.n, RawStdDev: raw.sd, Drift: st.drift, DriftSE: st.driftSE, Note: req.Note}
	return d.calibs().AddPoint(p)
}

// steady reads g's window and checks it holds. The drift is judged on the
// calibrated values when all of them are valid (so it is a change of
// pressure), else on the raw signal.
func (d *Daemon) steady(g *gauge, from, to time.Time, win time.Duration, limit float64) (steadiness, window, error) {
	w, err := d.readWindow(g, from, to)
	if err != nil && len(w.raw) == 0 {
		return steadiness{}, w, fmt.Errorf("gauge %s: reading stored samples: %w", g.name, err)
	}
	series := w.raw
	if w.value != nil {
		series = w.value
	}
	st := analyse(w.t, series, win.Seconds())
	if err := st.check(limit, win); err != nil {
		extra := ""
		if w.skipped > 0 {
			extra = fmt.Sprintf(" (%d samples with a sensor fault or the sensor off left out)", w.skipped)
		}
		return st, w, fmt.Errorf("gauge %s%s: %w", g.name, extra, err)
	}
	return st, w, nil
}

// reference resolves the request's one reference to an absolute pressure
// (Pa) and says where it came from.
func (d *Daemon) reference(g *gauge, req pointRequest, from, to time.Time, win time.Duration, limit float64) (float64, string, error) {
	n := 0
	for _, set := range []bool{req.Reference != nil, req.ColumnHeight != nil, req.ReferenceGauge != ""} {
		if set {
			n++
		}
	}
	if n != 1 {
		return 0, "", errors.New("give exactly one reference: a pressure (reference_pa), a column height (column_height_m) or a reference gauge (reference_gauge)")
	}
	switch {
	case req.Reference != nil:
		p := *req.Reference
		if !(p > 0) || math.IsInf(p, 0) {
			return 0, "", fmt.Errorf("reference %g Pa: must be an absolute pressure above zero", p)
		}
		return p, "given", nil
	case req.ColumnHeight != nil:
		return d.columnReference(g, req)
	}
	rg := d.gaugeNamed(req.ReferenceGauge)
	if rg == nil || rg == g || rg.dim != calib.Pressure {
		return 0, "", fmt.Errorf("reference gauge %q: want another pressure gauge of this daemon (gauges: %v)", req.ReferenceGauge, d.GaugeNames())
	}
	st, w, err := d.steady(rg, from, to, win, limit)
	if err != nil {
		return 0, "", fmt.Errorf("reference %w", err)
	}
	if w.value == nil {
		return 0, "", refuse("reference gauge %s has samples without a valid value in the window (out of its range?)", rg.name)
	}
	return st.mean, fmt.Sprintf("gauge %s: mean of %d samples over %s, sd %.3g Pa, drift %+.3g %%", rg.name, st.n, win, st.sd, 100*st.drift), nil
}

// columnReference turns a closed-top column's height into a pressure in
// the gauge's configured reference liquid (or the request's).
func (d *Daemon) columnReference(g *gauge, req pointRequest) (float64, string, error) {
	var base config.ReferenceFluid
	if g.cfg.Calibration != nil && g.cfg.Calibration.Fluid != nil {
		base = *g.cfg.Calibration.Fluid
	} else if req.Fluid == nil {
		return 0, "", fmt.Errorf("gauge %s has no reference liquid: add calibration.reference_fluid to its config (e.g. {density: 870 kg/m3, expansion: 7e-4}), or give --density", g.name)
	}
	col, desc, err := base.Merged(req.Fluid).Column(*req.ColumnHeight)
	if err != nil {
		return 0, "", fmt.Errorf("reference column: %w", err)
	}
	p, err := col.Pressure()
	if err != nil {
		return 0, "", fmt.Errorf("reference column: %w", err)
	}
	if !(p > 0) {
		return 0, "", errors.New("reference column: height 0 gives no pressure; a zero belongs in a baseline, not a calibration point")
	}
	return p, desc, nil
}
