package daemon

import (
	"errors"
	"net/http"

	"holdfast/daemon/alarmstore"
)

func (d *Daemon) bakeRoutes(mux *http.ServeMux) {
	mux.HandleFunc("GET /api/v1/bakes", d.apiBakes)
	mux.HandleFunc("GET /api/v1/bakes/{id}", d.apiBake)
	mux.HandleFunc("POST /api/v1/bakes", d.changes(d.apiBakeStart))
}

func (d *Daemon) apiBakes(w http.ResponseWriter, _ *http.Request) {
	bs, err := d.Bakes()
	if err != nil && len(bs) == 0 {
		apiError(w, http.StatusInternalServerError, err.Error())
		return
	}
	if bs == nil {
		bs = []BakeJSON{}
	}
	writeJSON(w, bs)
}

func (d *Daemon) apiBake(w http.ResponseWriter, r *http.Request) {
	id := r.PathValue("id")
	bs, err := d.Bakes()
	for _, b := range bs {
		if b.ID == id {
			writeJSON(w, b)
			return
		}
	}
	if err != nil {
		apiError(w, http.StatusInternalServerError, err.Error())
		return
	}
	apiError(w, http.StatusNotFound, "bake "+id+": "+alarmstore.ErrNoBake.Error())
}

// apiBakeStart starts a bake now (a plan with start: api, or any plan
// whose ramp should be counted from this moment).
func (d *Daemon) apiBakeStart(w http.ResponseWriter, _ *http.Request) {
	if d.bake == nil {
		apiError(w, http.StatusConflict, "no bake plan is configured (add a bake: section)")
		return
	}
	now := d.clock.Now()
	d.bake.once.Do(func() { d.resumeBake(d.log) })
	if !d.bake.t.Begin(now) {
		apiError(w, http.StatusConflict, "a bake is already running")
		return
	}
	r := d.bake.t.Snapshot()
	d.bakeSteps(d.log, r.Steps, r)
	bs, err := d.Bakes()
	if err != nil || len(bs) == 0 {
		apiError(w, http.StatusInternalServerError, errors.Join(err, errors.New("bake not recorded")).Error())
		return
	}
	w.WriteHeader(http.StatusCreated)
	writeJSON(w, bs[len(bs)-1])
}
