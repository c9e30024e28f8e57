package daemon

import (
	"errors"
	"fmt"
	"net/http"
	"strconv"

	"holdfast/daemon/calibstore"
)

// The calibration API. Reads are open; changes go through d.changes (a
// bearer token). Every error is {"error": "..."}: 404 for an unknown id,
// 409 when the daemon will not do it now (a drifting gauge), 400 otherwise.

// calibJSON is one version in list and show replies: the stored record and its state.
type calibJSON struct {
	calibstore.Record
	State string `json:"state"`
}

// activateJSON answers an activation or retirement.
type activateJSON struct {
	Calibration calibJSON `json:"calibration,omitzero"`
	Gauge       string    `json:"gauge"`
	Replaced    uint32    `json:"replaced"` // the version active before; 0 for the instrument's own curve
	// Activation only: the raw and pressure range the version was fitted
	// over, and what the gauge reads outside it.
	Covers  string `json:"covers,omitempty"`
	Outside string `json:"outside,omitempty"`
}

func (d *Daemon) apiCalibList(w http.ResponseWriter, r *http.Request) {
	recs, err := d.calibs().List(r.URL.Query().Get("gauge"))
	if err != nil && len(recs) == 0 {
		apiFail(w, err)
		return
	}
	out := make([]calibJSON, len(recs))
	for i, rec := range recs {
		out[i] = calibJSON{rec, rec.State()}
	}
	writeJSON(w, out)
}

func (d *Daemon) apiCalibShow(w http.ResponseWriter, r *http.Request) {
	id, err := pathID(r, 32)
	if err != nil {
		apiFail(w, err)
		return
	}
	rec, err := d.calibs().Get(uint32(id))
	if err != nil {
		apiFail(w, err)
		return
	}
	writeJSON(w, calibJSON{rec, rec.State()})
}

func (d *Daemon) apiPointList(w http.ResponseWriter, r *http.Request) {
	pts, err := d.calibs().Points(r.URL.Query().Get("gauge"))
	if err != nil && len(pts) == 0 {
		apiFail(w, err)
		return
	}
	writeJSON(w, append([]calibstore.Point{}, pts...))
}

func (d *Daemon) apiAuditList(w http.ResponseWriter, r *http.Request) {
	as, err := d.calibs().Audits(r.URL.Query().Get("gauge"))
	if err != nil && len(as) == 0 {
		apiFail(w, err)
		return
	}
	writeJSON(w, append([]calibstore.Audit{}, as...))
}

func (d *Daemon) apiPointTake(w http.ResponseWriter, r *http.Request) {
	var req pointRequest
	if !readBody(w, r, &req) {
		return
	}
	p, err := d.takePoint(req)
	if err != nil {
		apiFail(w, err)
		return
	}
	w.Header().Set("Content-Type", "application/json")
	w.WriteHeader(http.StatusCreated)
	writeJSON(w, p)
}

func (d *Daemon) apiPointExclude(w http.ResponseWriter, r *http.Request) {
	id, err := pathID(r, 64)
	if err != nil {
		apiFail(w, err)
		return
	}
	var req struct {
		Reason string `json:"reason"`
	}
	if !readBody(w, r, &req) {
		return
	}
	p, err := d.calibs().Exclude(id, req.Reason, d.clock.Now())
	if err != nil {
		apiFail(w, err)
		return
	}
	writeJSON(w, p)
}

func (d *Daemon) apiCalibFit(w http.ResponseWriter, r *http.Request) {
	var req fitRequest
	if !readBody(w, r, &req) {
		return
	}
	rec, err := d.fit(req)
	if err != nil {
		apiFail(w, err)
		return
	}
	w.Header().Set("Content-Type", "application/json")
	w.WriteHeader(http.StatusCreated)
	writeJSON(w, calibJSON{rec, rec.State()})
}

func (d *Daemon) apiCalibActivate(w http.ResponseWriter, r *http.Request) {
	id, err := pathID(r, 32)
	if err != nil {
		apiFail(w, err)
		return
	}
	var req struct {
		Note string `json:"note"`
	}
	if r.ContentLength != 0 && !readBody(w, r, &req) {
		return
	}
	rec, replaced, err := d.activate(uint32(id), req.Note)
	if err != nil {
		apiFail(w, err)
		return
	}
	out := activateJSON{Calibration: calibJSON{rec, rec.State()}, Gauge: rec.Gauge, Replaced: replaced, Covers: rec.Calibration.Covers()}
	if g := d.gaugeNamed(rec.Gauge); g != nil {
		out.Outside = g.extended(rec.Calibration).Beyond()
	}
	writeJSON(w, out)
}

func (d *Daemon) apiCalibRetire(w http.ResponseWriter, r *http.Request) {
	var req struct {
		Gauge string `json:"gauge"`
		Note  string `json:"note"`
	}
	if !readBody(w, r, &req) {
		return
	}
	id, err := d.retire(req.Gauge, req.Note)
	if err != nil {
		apiFail(w, err)
		return
	}
	writeJSON(w, activateJSON{Gauge: req.Gauge, Replaced: id})
}

func (d *Daemon) apiReprocess(w http.ResponseWriter, r *http.Request) {
	var req reprocessRequest
	if !readBody(w, r, &req) {
		return
	}
	a, err := d.reprocess(req)
	if err != nil {
		apiFail(w, err)
		return
	}
	writeJSON(w, a)
}

// readBody decodes a JSON request body, refusing unknown fields; on a bad
// body it writes the 400 reply and returns false.
func readBody(w http.ResponseWriter, r *http.Request, v any) bool {
	return readJSON(w, r, 1<<20, v, "")
}

// pathID parses the {id} path segment.
func pathID(r *http.Request, bits int) (uint64, error) {
	s := r.PathValue("id")
	id, err := strconv.ParseUint(s, 10, bits)
	if err != nil || id == 0 {
		return 0, fmt.Errorf("id %q: want a positive whole number (see holdfast calib list)", s)
	}
	return id, nil
}

// apiFail writes err with the status its kind calls for.
func apiFail(w http.ResponseWriter, err error) {
	switch {
	case errors.Is(err, calibstore.ErrNotFound):
		apiError(w, http.StatusNotFound, err.Error())
	case errors.As(err, new(refusedError)):
		apiError(w, http.StatusConflict, err.Error())
	default:
		apiError(w, http.StatusBadRequest, err.Error())
	}
}
