package daemon

import (
	"errors"
	"fmt"
	"net/http"
	"sync"

	"holdfast/calib"
	"holdfast/daemon/calibstore"
	"holdfast/daemon/config"
)

// gaugeLive is what the calibration workflow and combined gauges keep per
// gauge beside the poller's state. It is built before Run starts; after
// that only mu's section changes anything.
type gaugeLive struct {
	builtin calib.Transfer // the instrument's own curve, as built from the config
	// mu serialises activation and retirement, so the version the store
	// marks active is the one the poller applies.
	mu sync.Mutex

	members []*gauge     // combined gauge: its members, in config order
	spans   []calib.Span // combined gauge: each member's trusted range
	feeds   []*gauge     // combined gauges this gauge is a member of

	// blendMu serialises a combined gauge's updates: its members may sit
	// on different links, polled by different goroutines.
	blendMu sync.Mutex
	// pending is a combined gauge's newest blend, not yet stored: members
	// polled in one slot answer within the store's resolution of each
	// other, each re-blending, and only the last blend of a stored time
	// (made with every member's fresh reading) is stored; it is appended
	// once a blend of a later time comes, or by flushBlends. Under blendMu.
	pending *calib.Sample
}

// liveState returns g's live state, creating it (with g's current transfer
// as the instrument's own curve) while the daemon is being built.
func (g *gauge) liveState() *gaugeLive {
	if g.live == nil {
		g.live = &gaugeLive{builtin: g.transfer}
	}
	return g.live
}

// extended is how g applies calibration c live: c inside its fitted range,
// and outside it the model extended or the instrument's own curve, with
// quality extrapolated (calib.Extended), so a calibration never blanks a
// gauge that its instrument can still read.
func (g *gauge) extended(c *calib.Calibration) calib.Extended {
	return calib.Extended{Cal: c, Instrument: g.liveState().builtin}
}

// virtual reports whether g is a combined gauge.
func (g *gauge) virtual() bool { return len(g.cfg.Combine) > 0 }

// calibs is the calibration store in the daemon's bbolt file.
func (d *Daemon) calibs() *calibstore.Store { return calibstore.New(d.store.Bolt()) }

// gaugeNamed returns the gauge called name, or nil.
func (d *Daemon) gaugeNamed(name string) *gauge {
	for _, g := range d.gauges {
		if g.name == name {
			return g
		}
	}
	return nil
}

// loadCalibrations gives each gauge its active calibration from the store.
// A stored version that cannot be read is reported and the gauge keeps its
// instrument's curve (its samples then carry calibration 0, and can be
// reprocessed once the version is fixed); the daemon still starts, because
// a monitor that refuses to run watches nothing.
func (d *Daemon) loadCalibrations() error {
	cs := d.calibs()
	if err := cs.Init(); err != nil {
		return fmt.Errorf("calibrations: %w", err)
	}
	for _, g := range d.gauges {
		g.liveState()
	}
	active, err := cs.Active()
	if err != nil {
		return fmt.Errorf("calibrations: %w", err)
	}
	for _, name := range sortedKeys(active) {
		id := active[name]
		g := d.gaugeNamed(name)
		switch {
		case g == nil:
			d.log.Info("stored calibration for a gauge not in the config; kept, not applied", "gauge", name, "calibration", id)
			continue
		case g.virtual() || !config.CalibrationOn(g.cfg):
			d.log.Info("stored calibration not applied: the config says calibration: none", "gauge", name, "calibration", id)
			continue
		}
		rec, err := cs.Get(id)
		if err != nil {
			d.log.Error("active calibration unreadable; using the instrument's own curve", "gauge", name, "calibration", id, "err", err)
			continue
		}
		g.setTransfer(g.extended(rec.Calibration), id)
		d.log.Info("calibration applied", "gauge", name, "calibration", id, "model", rec.Model)
	}
	return nil
}

// refusedError marks a request the daemon understood but will not carry
// out in the present state (a drifting gauge, a gauge with calibration:
// none); the API answers it with 409.
type refusedError struct{ err error }

func (e refusedError) Error() string { return e.err.Error() }
func (e refusedError) Unwrap() error { return e.err }

func refuse(format string, a ...any) error { return refusedError{fmt.Errorf(format, a...)} }

// calibratable returns the gauge a calibration may be taken or applied on.
func (d *Daemon) calibratable(name string) (*gauge, error) {
	g := d.gaugeNamed(name)
	switch {
	case name == "":
		return nil, errors.New("say which gauge (gauge)")
	case g == nil:
		return nil, fmt.Errorf("no gauge %q in this daemon's config (gauges: %v)", name, d.GaugeNames())
	case g.virtual():
		return nil, fmt.Errorf("%q is a combined gauge: it has no raw signal; calibrate its members %v", name, g.cfg.Combine)
	case g.dim != calib.Pressure:
		return nil, fmt.Errorf("%q measures %s; calibrations here map a raw signal to pressure", name, g.cfg.Kind)
	}
	return g, nil
}

// activate makes version id active for its gauge and applies it to the
// next reading, without a restart. It returns the version replaced.
func (d *Daemon) activate(id uint32, note string) (calibstore.Record, uint32, error) {
	cs := d.calibs()
	rec, err := cs.Get(id)
	if err != nil {
		return rec, 0, err
	}
	g, err := d.calibratable(rec.Gauge)
	if err != nil {
		return rec, 0, err
	}
	if !config.CalibrationOn(g.cfg) {
		return rec, 0, refuse("gauge %s has calibration: none in the config, so an active version would not be applied; set calibration: active first", g.name)
	}
	g.live.mu.Lock()
	defer g.live.mu.Unlock()
	replaced, rec, err := cs.Activate(id, d.clock.Now(), note)
	if err != nil {
		return rec, 0, err
	}
	g.setTransfer(g.extended(rec.Calibration), id)
	d.log.Info("calibration activated", "gauge", g.name, "calibration", id, "replaced", replaced)
	return rec, replaced, nil
}

// retire puts gauge back on its instrument's own curve.
func (d *Daemon) retire(name, note string) (uint32, error) {
	g, err := d.calibratable(name)
	if err != nil {
		return 0, err
	}
	g.live.mu.Lock()
	defer g.live.mu.Unlock()
	id, err := d.calibs().Retire(name, d.clock.Now(), note)
	if err != nil {
		return 0, err
	}
	g.setTransfer(g.live.builtin, 0)
	d.log.Info("calibration retired; instrument curve in use", "gauge", name, "calibration", id)
	return id, nil
}

// calibRoutes mounts the calibration API (api_calib.go) and registers the
// calibration metrics with the daemon's registry.
func (d *Daemon) calibRoutes(mux *http.ServeMux) {
	if err := d.met.reg.Register(calibCollector{d}); err != nil && !errors.As(err, new(prometheusAlreadyRegistered)) {
		d.log.Warn("calibration metrics not registered", "err", err)
	}
	mux.HandleFunc("GET /api/v1/calibrations", d.apiCalibList)
	mux.HandleFunc("GET /api/v1/calibrations/{id}", d.apiCalibShow)
	mux.HandleFunc("GET /api/v1/calibrations/points", d.apiPointList)
	mux.HandleFunc("GET /api/v1/calibrations/audit", d.apiAuditList)
	mux.HandleFunc("POST /api/v1/calibrations/points", d.changes(d.apiPointTake))
	mux.HandleFunc("POST /api/v1/calibrations/points/{id}/exclude", d.changes(d.apiPointExclude))
	mux.HandleFunc("POST /api/v1/calibrations/fit", d.changes(d.apiCalibFit))
	mux.HandleFunc("POST /api/v1/calibrations/{id}/activate", d.changes(d.apiCalibActivate))
	mux.HandleFunc("POST /api/v1/calibrations/retire", d.changes(d.apiCalibRetire))
	mux.HandleFunc("POST /api/v1/calibrations/reprocess", d.changes(d.apiReprocess))
}
