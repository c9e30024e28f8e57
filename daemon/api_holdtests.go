package daemon

import (
	"errors"
	"net/http"
	"time"

	"holdfast/calib"
	"holdfast/daemon/alarmstore"
)

func (d *Daemon) holdTestRoutes(mux *http.ServeMux) {
	mux.HandleFunc("GET /api/v1/holdtests", d.apiHoldTests)
	mux.HandleFunc("POST /api/v1/holdtests", d.changes(d.apiHoldTestStart))
	mux.HandleFunc("GET /api/v1/holdtests/{id}", d.apiHoldTestFile("report.json", "application/json"))
	mux.HandleFunc("GET /api/v1/holdtests/{id}/rise.svg", d.apiHoldTestFile("rise.svg", "image/svg+xml"))
}

// HoldTestStartJSON is the body of POST /api/v1/holdtests. Empty settle
// and duration take the gauge's hold_test alarm settings, else 2 min and 10 min.
type HoldTestStartJSON struct {
	Gauge    string `json:"gauge"`
	Settle   string `json:"settle"`
	Duration string `json:"duration"`
	// Force starts the test although the start check refuses it (gauge
	// out of range, pressure still falling fast); the report keeps the
	// warning.
	Force bool `json:"force,omitempty"`
}

func (d *Daemon) apiHoldTestStart(w http.ResponseWriter, r *http.Request) {
	var b HoldTestStartJSON
	if !readJSON(w, r, 1<<12, &b, `{"gauge": "...", "settle": "2m", "duration": "10m"}`) {
		return
	}
	settle, dur := 2*time.Minute, 10*time.Minute
	if hc := d.holdDefaults(b.Gauge); hc != nil {
		settle, dur = hc.Settle.D(), hc.Duration.D()
	}
	var err error
	if settle, err = optDuration(b.Settle, settle, 0); err != nil {
		apiError(w, http.StatusBadRequest, "settle: "+err.Error())
		return
	}
	if dur, err = optDuration(b.Duration, dur, 30*time.Second); err != nil {
		apiError(w, http.StatusBadRequest, "duration: "+err.Error())
		return
	}
	h, err := d.startHoldTest(b.Gauge, settle, dur, b.Force)
	if err != nil {
		apiError(w, http.StatusConflict, err.Error())
		return
	}
	d.log.Info("hold test started", "id", h.ID, "gauge", h.Gauge, "valve", h.Valve)
	w.WriteHeader(http.StatusCreated)
	writeJSON(w, h)
}

func optDuration(s string, def, least time.Duration) (time.Duration, error) {
	if s == "" {
		return def, nil
	}
	v, err := calib.ParseDuration(s)
	if err != nil {
		return 0, err
	}
	if v < least {
		return 0, errors.New("want at least " + least.String())
	}
	return v, nil
}

func (d *Daemon) apiHoldTests(w http.ResponseWriter, _ *http.Request) {
	hs, err := d.recentHoldTests(0)
	if err != nil && len(hs) == 0 {
		apiError(w, http.StatusInternalServerError, err.Error())
		return
	}
	if hs == nil {
		hs = []HoldTestJSON{}
	}
	writeJSON(w, hs)
}

func (d *Daemon) apiHoldTestFile(name, ctype string) http.HandlerFunc {
	return func(w http.ResponseWriter, r *http.Request) {
		b, err := alarmstore.Wrap(d.store.Bolt()).HoldTest(r.PathValue("id"), name)
		if err != nil {
			status := http.StatusNotFound
			if !errors.Is(err, alarmstore.ErrNoHoldTest) {
				status = http.StatusConflict
			}
			apiError(w, status, err.Error())
			return
		}
		w.Header().Set("Content-Type", ctype)
		_, _ = w.Write(b)
	}
}
