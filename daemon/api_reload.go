package daemon

import (
	"encoding/json"
	"errors"
	"net/http"

	"holdfast/daemon/config"
)

// reloadPath is the one route served outside liveMu: a reload takes it.
const reloadPath = "/api/v1/config/reload"

// ReloadJSON is the answer of POST /api/v1/config/reload: what changed, or
// why nothing was applied.
type ReloadJSON struct {
	Applied  bool             `json:"applied"`
	Changes  string           `json:"changes"`         // one change a line, as config.Changes.String
	Error    string           `json:"error,omitempty"` // why nothing was applied
	Problems []config.Problem `json:"problems,omitempty"`
	File     string           `json:"file"`
}

// apiReload re-reads the config file and applies it (Reload); 422 lists
// the file's problems, 409 a change that needs a restart.
func (d *Daemon) apiReload(w http.ResponseWriter, r *http.Request) {
	ch, err := d.Reload(r.Context())
	out := ReloadJSON{Applied: err == nil, Changes: ch.String(), File: d.file}
	status := http.StatusOK
	var ce *config.ConfigError
	var re *ReloadError
	switch {
	case errors.As(err, &ce):
		status, out.Error, out.Problems = http.StatusUnprocessableEntity, "the config has problems; the running config stays", ce.Problems
	case errors.As(err, &re):
		status, out.Error = http.StatusConflict, re.Error()
	case err != nil:
		status, out.Error = http.StatusInternalServerError, err.Error()
	}
	w.Header().Set("Content-Type", "application/json")
	w.WriteHeader(status)
	json.NewEncoder(w).Encode(out)
}

// underLive serves every request but a reload holding liveMu for reading,
// so that a reload swaps the config between requests, never during one.
func (d *Daemon) underLive(mux *http.ServeMux) http.Handler {
	return http.HandlerFunc(func(w http.ResponseWriter, r *http.Request) {
		if r.URL.Path == reloadPath {
			mux.ServeHTTP(w, r)
			return
		}
		d.liveMu.RLock()
		defer d.liveMu.RUnlock()
		mux.ServeHTTP(w, r)
	})
}
