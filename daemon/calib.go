package daemon

import "net/http"

// loadCalibrations gives each gauge its active calibration from the store.
// There is no calibration store yet: every gauge uses its own transfer.
func (d *Daemon) loadCalibrations() error { return nil }

// calibRoutes mounts the calibration API. There is none yet.
func (d *Daemon) calibRoutes(mux *http.ServeMux) {}
