package daemon

import (
	"errors"
	"fmt"
	"math"
	"time"

	"holdfast/calib"
	"holdfast/daemon/calibstore"
	"holdfast/daemon/store"
)

// reprocessRequest asks to recompute a gauge's stored values from their
// raw signal with another calibration (0: the instrument's own curve).
type reprocessRequest struct {
	Gauge       string    `json:"gauge"`
	Calibration uint32    `json:"calibration"`
	From        time.Time `json:"from"`
	To          time.Time `json:"to"`
	// RecheckRange also recomputes samples stored as over- or under-range,
	// and lets the new calibration flag samples that had a value.
	// Leave it off when the instrument itself may have flagged them: the
	// store cannot tell its flags from an old calibration's range check.
	RecheckRange bool   `json:"recheck_range,omitempty"`
	Note         string `json:"note,omitempty"`
}

// recompute returns p with its value from t, or p unchanged (false). Ok
// and extrapolated samples are recomputed; flagged ones only with recheck
// (over- and under-range). Without recheck a sample that has a value never
// loses it: where t would flag it (its raw signal beyond anything t can
// read), it is kept as stored.
func recompute(p store.Point, t calib.Transfer, id uint32, recheck bool) (store.Point, bool) {
	q := calib.Quality(p.Quality)
	if !q.HasValue() && !(recheck && (q == calib.QualityOverRange || q == calib.QualityUnderRange)) {
		return p, false
	}
	v, err := t.Apply(p.Raw)
	nq := calib.QualityOf(err)
	if q.HasValue() && !nq.HasValue() && !recheck {
		return p, false
	}
	p.Quality, p.Calibration, p.Value = uint8(nq), id, v
	if !nq.HasValue() {
		p.Value = math.NaN()
	}
	return p, true
}

// reprocess rewrites the span. The raw values stay as they are; an audit
// record, written before the first change and completed after the last,
// lists which calibrations had produced the samples, so the step can be
// undone by reprocessing each listed run with its old calibration.
func (d *Daemon) reprocess(req reprocessRequest) (calibstore.Audit, error) {
	g, err := d.calibratable(req.Gauge)
	if err != nil {
		return calibstore.Audit{}, err
	}
	t, err := d.transferFor(g, req.Calibration)
	if err != nil {
		return calibstore.Audit{}, err
	}
	now := d.clock.Now()
	if req.To.IsZero() || req.To.After(now) {
		req.To = now
	}
	if req.From.IsZero() || !req.From.Before(req.To) {
		return calibstore.Audit{}, fmt.Errorf("span %s … %s: from must be before to (and to not after now)", req.From.Format(time.RFC3339), req.To.Format(time.RFC3339))
	}
	a := calibstore.Audit{At: now, Action: "reprocess", Gauge: g.name, Calibration: req.Calibration, From: req.From, To: req.To, Status: "started", Note: req.Note}
	tAt, err := d.ambientTransfers(g, t, req.From, req.To)
	if err == nil {
		tAt, err = d.correctedTransfers(g, tAt, req.From, req.To) // gas and transpiration, as live
	}
	if err != nil {
		return calibstore.Audit{}, fmt.Errorf("reprocess %s: %w", g.name, err)
	}
	err = d.store.Range(g.name, req.From, req.To, func(p store.Point) bool {
		a.Samples++
		a.Previous = calibstore.AddRuns(a.Previous, p.At, p.Calibration)
		q, done := recompute(p, tAt(p.At), req.Calibration, req.RecheckRange)
		if !done {
			a.KeptFlags++
		} else if q.Quality != p.Quality || q.Calibration != p.Calibration || math.Float64bits(q.Value) != math.Float64bits(p.Value) {
			a.Changed++
		}
		return true
	})
	if err != nil {
		return a, fmt.Errorf("reprocess %s: reading the span: %w", g.name, err)
	}
	cs := d.calibs()
	if a, err = cs.AddAudit(a); err != nil {
		return a, err
	}
	n, rerr := d.store.Rewrite(g.name, req.From, req.To, func(p store.Point) store.Point {
		q, _ := recompute(p, tAt(p.At), req.Calibration, req.RecheckRange)
		return q
	})
	a.Status = "done"
	if rerr != nil {
		a.Status = fmt.Sprintf("failed after %d samples: %v", n, rerr)
	}
	d.log.Info("samples reprocessed", "gauge", g.name, "calibration", req.Calibration, "samples", n, "status", a.Status)
	return a, errors.Join(rerr, cs.UpdateAudit(a))
}

// transferFor returns the mapping of calibration id for g: 0 is the
// instrument's own curve; another id must be a version fitted for g.
func (d *Daemon) transferFor(g *gauge, id uint32) (calib.Transfer, error) {
	if id == 0 {
		return g.live.builtin, nil
	}
	rec, err := d.calibs().Get(id)
	if err != nil {
		return nil, err
	}
	if rec.Gauge != g.name {
		return nil, fmt.Errorf("calibration %d was fitted for gauge %s, not %s", id, rec.Gauge, g.name)
	}
	return g.extended(rec.Calibration), nil
}
