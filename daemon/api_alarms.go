package daemon

import (
	"errors"
	"math"
	"net/http"
	"strconv"
	"time"

	"holdfast/alerts"
	"holdfast/calib"
	"holdfast/daemon/alarmstore"
)

// alarmRoutes mounts the alarm and hold-test API. Reading is open;
// every change needs the bearer token.
func (d *Daemon) alarmRoutes(mux *http.ServeMux) {
	mux.HandleFunc("GET /api/v1/alarms", d.apiAlarms)
	mux.HandleFunc("GET /api/v1/alarms/history", d.apiAlarmHistory)
	mux.HandleFunc("POST /api/v1/alarms/{name}/{action}", d.changes(d.apiAlarmAction))
	mux.HandleFunc("POST /api/v1/isolation", d.changes(d.apiIsolation))
	mux.HandleFunc("GET /api/v1/rise-watch", d.apiRiseWatch)
	d.holdTestRoutes(mux)
}

// AlarmJSON is one alarm in /api/v1/alarms.
type AlarmJSON struct {
	Alarm      string    `json:"alarm"`
	Gauge      string    `json:"gauge"`
	Kind       string    `json:"kind"`
	Severity   string    `json:"severity"`
	State      string    `json:"state"`
	Active     bool      `json:"active"`
	Acked      bool      `json:"acknowledged"`
	Since      time.Time `json:"since,omitzero"`
	Raised     int       `json:"raised"`
	Occurrence uint64    `json:"occurrence"`
	Chattering bool      `json:"chattering"`
	Until      time.Time `json:"shelved_until,omitzero"`
	Reason     string    `json:"reason,omitempty"`
	Message    string    `json:"message,omitempty"`
	Value      *float64  `json:"value_si,omitempty"`
	Limit      *float64  `json:"limit_si,omitempty"`
	ValueText  string    `json:"value,omitempty"`
	LimitText  string    `json:"limit,omitempty"`
}

func finite(v float64) *float64 {
	if math.IsNaN(v) || math.IsInf(v, 0) {
		return nil
	}
	return &v
}

func alarmJSON(s alerts.AlarmStatus) AlarmJSON {
	return AlarmJSON{Alarm: s.Alarm, Gauge: s.Gauge, Kind: s.Kind, Severity: string(s.Severity), State: string(s.State),
		Active: s.Active, Acked: s.Acked, Since: s.Since, Raised: s.Raised, Occurrence: s.Occurrence, Chattering: s.Chattering,
		Until: s.Until, Reason: s.Reason, Message: s.Message, Value: finite(s.Value), Limit: finite(s.Limit),
		ValueText: s.ValueText, LimitText: s.LimitText}
}

func (d *Daemon) apiAlarms(w http.ResponseWriter, _ *http.Request) {
	st := d.alarms.Status()
	out := make([]AlarmJSON, len(st))
	for i, s := range st {
		out[i] = alarmJSON(s)
	}
	writeJSON(w, out)
}

// EventJSON is one alarm transition in the history.
type EventJSON struct {
	At         time.Time `json:"at"`
	Kind       string    `json:"kind"`
	Alarm      string    `json:"alarm"`
	Gauge      string    `json:"gauge"`
	Severity   string    `json:"severity"`
	State      string    `json:"state"`
	Message    string    `json:"message"`
	Value      *float64  `json:"value_si,omitempty"`
	Limit      *float64  `json:"limit_si,omitempty"`
	Unit       string    `json:"unit,omitempty"`
	Occurrence uint64    `json:"occurrence"`
	DedupeKey  string    `json:"dedupe_key"`
	By         string    `json:"by,omitempty"`
	Notifier   string    `json:"notifier,omitempty"` // kind notify-parked: the notifier whose receiver refused it
}

func (d *Daemon) apiAlarmHistory(w http.ResponseWriter, r *http.Request) {
	q := r.URL.Query()
	limit, err := strconv.Atoi(q.Get("limit"))
	if q.Get("limit") != "" && (err != nil || limit < 0) {
		apiError(w, http.StatusBadRequest, "limit: want a count such as 100")
		return
	}
	var from time.Time
	if s := q.Get("from"); s != "" {
		if from, err = time.Parse(time.RFC3339, s); err != nil {
			apiError(w, http.StatusBadRequest, "from: want an RFC 3339 time such as 2026-03-01T22:00:00Z")
			return
		}
	}
	evs, err := alarmstore.Wrap(d.store.Bolt()).History(q.Get("alarm"), from, limit)
	if err != nil && len(evs) == 0 {
		apiError(w, http.StatusInternalServerError, err.Error())
		return
	}
	out := make([]EventJSON, len(evs))
	for i, ev := range evs {
		out[i] = EventJSON{At: ev.At, Kind: string(ev.Kind), Alarm: ev.Alarm, Gauge: ev.Gauge, Severity: string(ev.Severity),
			State: string(ev.State), Message: ev.Message, Value: finite(ev.Value), Limit: finite(ev.Limit), Unit: ev.Unit,
			Occurrence: ev.Occurrence, DedupeKey: ev.DedupeKey, By: ev.By}
	}
	writeJSON(w, withParked(out, d.parkedHistory(q.Get("alarm"), from), limit))
}

// AlarmActionJSON is the body of POST /api/v1/alarms/{name}/{action}.
type AlarmActionJSON struct {
	By     string `json:"by"`
	Reason string `json:"reason"`
	For    string `json:"for"`   // shelve: how long, e.g. "2h"
	Until  string `json:"until"` // shelve: or until when (RFC 3339)
}

func (d *Daemon) apiAlarmAction(w http.ResponseWriter, r *http.Request) {
	var body AlarmActionJSON
	if r.ContentLength != 0 && !readJSON(w, r, 1<<16, &body, `{"by": "night shift", "reason": "..."}`) {
		return
	}
	now := d.clock.Now()
	a := alerts.Action{Alarm: r.PathValue("name"), By: body.By, Reason: body.Reason, At: now}
	var ev alerts.Event
	var err error
	switch r.PathValue("action") {
	case "ack":
		ev, err = d.alarms.Ack(a)
	case "shelve":
		if a.Until, err = shelveUntil(body, now); err != nil {
			apiError(w, http.StatusBadRequest, err.Error()) // the request is at fault, not the alarm's state
			return
		}
		ev, err = d.alarms.Shelve(a)
	case "unshelve":
		ev, err = d.alarms.Unshelve(a)
	case "suppress", "unsuppress":
		ev, err = d.alarms.Suppress(a, r.PathValue("action") == "suppress")
	case "out-of-service", "in-service":
		ev, err = d.alarms.SetService(a, r.PathValue("action") == "out-of-service")
	default:
		apiError(w, http.StatusNotFound, "unknown action "+strconv.Quote(r.PathValue("action"))+
			" (known: ack, shelve, unshelve, suppress, unsuppress, out-of-service, in-service)")
		return
	}
	switch {
	case errors.Is(err, alerts.ErrUnknownAlarm):
		apiError(w, http.StatusNotFound, err.Error())
		return
	case errors.Is(err, alerts.ErrShelfLimit):
		apiError(w, http.StatusBadRequest, err.Error())
		return
	case errors.Is(err, alerts.ErrNoChange), err != nil && ev.Kind == "":
		apiError(w, http.StatusConflict, err.Error())
		return
	case errors.Is(err, alerts.ErrNotStored):
		// Done, and waiting in the engine: the alarm loop notifies it once stored.
		apiError(w, http.StatusServiceUnavailable, err.Error())
		return
	}
	d.alarmEvent(d.log.With("part", "alarms"), ev)
	if err != nil {
		apiError(w, http.StatusInternalServerError, err.Error())
		return
	}
	for _, s := range d.alarms.Status() {
		if s.Alarm == a.Alarm {
			writeJSON(w, alarmJSON(s))
		}
	}
}

// shelveUntil reads a shelving expiry: "for" a duration, "until" a time,
// or neither (zero: the engine's default, shelving.default; refused for a
// critical alarm).
func shelveUntil(b AlarmActionJSON, now time.Time) (time.Time, error) {
	switch {
	case b.For != "" && b.Until != "":
		return time.Time{}, errors.New("shelve: give for or until, not both")
	case b.For != "":
		d, err := calib.ParseDuration(b.For)
		if err != nil || d <= 0 {
			return time.Time{}, errors.New("shelve: for: want a positive duration such as 2h")
		}
		return now.Add(d), nil
	case b.Until != "":
		t, err := time.Parse(time.RFC3339, b.Until)
		if err != nil {
			return time.Time{}, errors.New("shelve: until: want an RFC 3339 time such as 2026-03-02T07:00:00Z")
		}
		return t, nil
	}
	return time.Time{}, nil
}

func (d *Daemon) apiIsolation(w http.ResponseWriter, r *http.Request) {
	var body struct {
		Isolated *bool `json:"isolated"`
	}
	if !readJSON(w, r, 1<<12, &body, `{"isolated": true}`) {
		return
	}
	if body.Isolated == nil {
		apiError(w, http.StatusBadRequest, `request body: want {"isolated": true} or {"isolated": false}`)
		return
	}
	d.alarms.SetIsolated(*body.Isolated)
	d.log.Info("chamber isolation set through the API", "isolated", *body.Isolated)
	writeJSON(w, map[string]bool{"isolated": *body.Isolated})
}

func (d *Daemon) apiRiseWatch(w http.ResponseWriter, _ *http.Request) {
	writeJSON(w, d.alarms.RiseResults())
}
