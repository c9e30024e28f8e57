package daemon

import (
	"io"
	"net/http"
	"net/http/httptest"
	"reflect"
	"slices"
	"strconv"
	"strings"
	"testing"
	"time"

	bolt "go.etcd.io/bbolt"

	"holdfast/alerts"
	"holdfast/daemon/alarmstore"
)

// alarmReloadBase is reloadBase with two alarms on pirani, whose reading
// on the simulated chamber (atmosphere pumped down to a 1 Pa ultimate)
// never falls to 0.01 Pa: rough is raised at the first sample and slow's
// ten-hour on-delay starts then and runs on through every test.
const alarmReloadBase = reloadBase + `alarms:
  - {name: rough, gauge: pirani, above: 0.01 Pa, severity: high}
  - {name: slow, gauge: pirani, above: 0.01 Pa, for: 10h, severity: low}
`

// alarmDaemon runs a daemon on base at 20× the wall clock and waits for its
// alarm state to load and for rough to be raised.
func alarmDaemon(t *testing.T, base string) (*Daemon, string) {
	t.Helper()
	d, path := reloadDaemonOn(t, 20, base)
	select {
	case <-d.alarmsReady:
	case <-time.After(10 * time.Second):
		t.Fatal("alarm state not loaded")
	}
	waitAlarm(t, d, "rough", func(a AlarmJSON) bool { return a.State == "unacknowledged" })
	return d, path
}

// alarmsNow is GET /api/v1/alarms by name, and the names in order.
func alarmsNow(t *testing.T, d *Daemon) (map[string]AlarmJSON, []string) {
	t.Helper()
	var list []AlarmJSON
	if code := apiCall(t, d, "GET", "/api/v1/alarms", "", nil, &list); code != http.StatusOK {
		t.Fatalf("GET /api/v1/alarms: status %d", code)
	}
	out, names := map[string]AlarmJSON{}, []string{}
	for _, a := range list {
		out[a.Alarm], names = a, append(names, a.Alarm)
	}
	return out, names
}

func waitAlarm(t *testing.T, d *Daemon, name string, ok func(AlarmJSON) bool) AlarmJSON {
	t.Helper()
	var a AlarmJSON
	waitFor(t, 15*time.Second, "alarm "+name, func() bool {
		all, _ := alarmsNow(t, d)
		a = all[name]
		return a.Alarm == name && ok(a)
	})
	return a
}

// alarmAction posts an operator action on an alarm with the test token.
func alarmAction(t *testing.T, d *Daemon, name, action string, body AlarmActionJSON) AlarmJSON {
	t.Helper()
	var a AlarmJSON
	if code := apiCall(t, d, "POST", "/api/v1/alarms/"+name+"/"+action, reloadToken, body, &a); code != http.StatusOK {
		t.Fatalf("%s %s: status %d", action, name, code)
	}
	return a
}

// historyOf is the stored history of one alarm, oldest first.
func historyOf(t *testing.T, d *Daemon, name string) []EventJSON {
	t.Helper()
	var evs []EventJSON
	if code := apiCall(t, d, "GET", "/api/v1/alarms/history?alarm="+name, "", nil, &evs); code != http.StatusOK {
		t.Fatalf("history of %s: status %d", name, code)
	}
	slices.SortStableFunc(evs, func(a, b EventJSON) int { return a.At.Compare(b.At) })
	return evs
}

// checkSeq checks that the dedupe keys of an alarm's history are all
// different and number its transitions 1, 2, 3, … with none skipped or
// used twice ("<instance>/<alarm>/<seq>/<state>", alerts.Event.DedupeKey).
func checkSeq(t *testing.T, evs []EventJSON) {
	t.Helper()
	keys := map[string]bool{}
	for i, ev := range evs {
		if keys[ev.DedupeKey] {
			t.Errorf("dedupe key %s used twice", ev.DedupeKey)
		}
		keys[ev.DedupeKey] = true
		parts := strings.Split(ev.DedupeKey, "/")
		if seq, err := strconv.Atoi(parts[len(parts)-2]); err != nil || seq != i+1 {
			t.Errorf("transition %d (%s) has key %s; want sequence number %d", i+1, ev.Kind, ev.DedupeKey, i+1)
		}
	}
}

func kindsOf(evs []EventJSON) []string {
	var out []string
	for _, ev := range evs {
		out = append(out, ev.Kind)
	}
	return out
}

// reloadOK reloads through the API and wants it applied with changes.
func reloadOK(t *testing.T, d *Daemon, path, text, changes string) {
	t.Helper()
	writeConfig(t, path, text)
	code, out := postReload(t, d, reloadToken)
	if code != http.StatusOK || !out.Applied {
		t.Fatalf("reload: status %d, %+v", code, out)
	}
	if out.Changes != changes {
		t.Errorf("reload changes %q, want %q", out.Changes, changes)
	}
}

// storedState is the alarm state the data file holds for name.
func storedState(t *testing.T, d *Daemon, name string) alerts.Saved {
	t.Helper()
	saved, err := alarmstore.Wrap(d.store.Bolt()).Load()
	if err != nil {
		t.Fatal(err)
	}
	for _, s := range saved {
		if s.Alarm == name {
			return s
		}
	}
	return alerts.Saved{}
}

// An alarm added by a reload is evaluated from the next samples; one
// removed leaves /api/v1/alarms and /metrics while its history stays.
func TestReloadAddsAndRemovesAlarms(t *testing.T) {
	d, path := alarmDaemon(t, alarmReloadBase)
	// cdg reads at most atmosphere (about 101 kPa), always below 200 kPa.
	reloadOK(t, d, path, strings.Replace(alarmReloadBase,
		"  - {name: rough, gauge: pirani, above: 0.01 Pa, severity: high}\n",
		"  - {name: fore, gauge: cdg, below: 200 kPa, severity: medium}\n  - {name: writes, health: store_writes, severity: high}\n", 1),
		"alarms added: fore, writes\nalarms removed: rough")
	if _, names := alarmsNow(t, d); !slices.Equal(names, []string{"fore", "writes", "slow"}) {
		t.Errorf("alarms after the reload: %v, want fore writes slow", names)
	}
	a := waitAlarm(t, d, "fore", func(a AlarmJSON) bool { return a.State == "unacknowledged" })
	if a.Raised != 1 || a.Occurrence != 1 {
		t.Errorf("fore raised %d times, occurrence %d; want 1 and 1 (a new alarm)", a.Raised, a.Occurrence)
	}
	// The daemon's own health reaches a health alarm every 10 s of its clock.
	if w := waitAlarm(t, d, "writes", func(a AlarmJSON) bool { return a.Value != nil }); *w.Value != 0 || w.State != "normal" {
		t.Errorf("writes: %+v; want normal, store writes working (0)", w)
	}
	m := scrapeText(t, d.Addr())
	if strings.Contains(m, `alarm="rough"`) {
		t.Errorf("/metrics still has series of the removed alarm rough:\n%s", grepLines(m, `alarm="rough"`))
	}
	if !strings.Contains(m, `holdfast_alarm_state{alarm="fore",gauge="cdg",severity="medium",state="unacknowledged"} 1`) {
		t.Errorf("/metrics lacks fore's state:\n%s", grepLines(m, "holdfast_alarm_state"))
	}
	if evs := historyOf(t, d, "rough"); !slices.Equal(kindsOf(evs), []string{"raised"}) {
		t.Errorf("history of the removed rough: %v, want its raise kept", kindsOf(evs))
	}

	// Removing the gauge fore watches, but not fore, is a problem of the
	// file: nothing is applied.
	writeConfig(t, path, strings.NewReplacer(
		"  - {name: rough, gauge: pirani, above: 0.01 Pa, severity: high}\n", "  - {name: fore, gauge: cdg, below: 200 kPa, severity: medium}\n",
		"  cdg: {link: bench, driver: sim, instrument: cdg, full_scale: 133 kPa, kind: pressure, interval: 1s}\n", "").Replace(alarmReloadBase))
	code, out := postReload(t, d, reloadToken)
	if code != http.StatusUnprocessableEntity || len(out.Problems) == 0 || out.Problems[0].Path != "alarms[0].gauge" {
		t.Errorf("reload removing fore's gauge: status %d, %+v; want 422 naming alarms[0].gauge", code, out)
	}
	if _, names := alarmsNow(t, d); !slices.Equal(names, []string{"fore", "writes", "slow"}) || !slices.Contains(d.GaugeNames(), "cdg") {
		t.Errorf("after the refused reload: alarms %v, gauges %v; want both as they were", names, d.GaugeNames())
	}
}

// An active, acknowledged alarm whose limit a reload relaxes past the
// reading clears through the normal path: a cleared record follows its
// raise and acknowledgement, numbered on from them; its raise count
// stays. The unchanged alarm beside it is left whole: its ten-hour
// on-delay runs on from when it started, its stored state not touched,
// and it runs under the very same alarm (rule and all).
func TestReloadRelaxedLimitClearsActiveAlarm(t *testing.T) {
	d, path := alarmDaemon(t, alarmReloadBase)
	alarmAction(t, d, "rough", "ack", AlarmActionJSON{By: "night shift"})
	// Relaxed to 50 kPa once pirani reads below 10 kPa (the pump-down is fast).
	waitAlarm(t, d, "rough", func(a AlarmJSON) bool { return a.Value != nil && *a.Value < 10e3 })
	slowBefore := storedState(t, d, "slow")
	if !slowBefore.Pending || slowBefore.PendingSince.IsZero() {
		t.Fatalf("slow's on-delay is not running before the reload: %+v", slowBefore)
	}
	slowDef := alarmDef(d, "slow")

	reloadOK(t, d, path, strings.Replace(alarmReloadBase, "rough, gauge: pirani, above: 0.01 Pa", "rough, gauge: pirani, above: 50 kPa", 1),
		"alarms changed: rough")
	a := waitAlarm(t, d, "rough", func(a AlarmJSON) bool { return a.State == "normal" })
	if a.Raised != 1 || a.Occurrence != 1 || a.Active {
		t.Errorf("rough after the reload: %+v; want cleared, raised once, occurrence 1", a)
	}
	evs := historyOf(t, d, "rough")
	if k := kindsOf(evs); !slices.Equal(k, []string{"raised", "acknowledged", "cleared"}) {
		t.Errorf("history of rough: %v, want raised acknowledged cleared", k)
	}
	checkSeq(t, evs)

	before := storedCount(t, d, "pirani")
	waitFor(t, 10*time.Second, "more pirani samples", func() bool { return storedCount(t, d, "pirani") > before+3 })
	if got := storedState(t, d, "slow"); !reflect.DeepEqual(got, slowBefore) {
		t.Errorf("stored state of the unchanged slow:\n got %+v\nwant %+v", got, slowBefore)
	}
	if alarmDef(d, "slow") != slowDef {
		t.Error("the unchanged slow was built again; want the running alarm kept")
	}
	if s, _ := alarmsNow(t, d); s["slow"].State != "normal" || s["slow"].Raised != 0 {
		t.Errorf("slow after the reload: %+v; want normal, never raised", s["slow"])
	}
}

// alarmDef is the engine's alarm named name, as the daemon built it.
func alarmDef(d *Daemon, name string) *alerts.Alarm {
	d.liveMu.RLock()
	defer d.liveMu.RUnlock()
	for _, a := range d.alarmDefs {
		if a.Name == name {
			return a
		}
	}
	return nil
}

// A shelved alarm whose rule and delays a reload changes stays shelved
// until its shelf ends; its next transition is numbered on. New shelving
// limits in the same reload apply to shelving asked for after it.
func TestReloadKeepsShelf(t *testing.T) {
	base := alarmReloadBase + "shelving: {default: 1h, max: 2h}\n"
	d, path := alarmDaemon(t, base)
	shelved := alarmAction(t, d, "rough", "shelve", AlarmActionJSON{By: "day shift", Reason: "pump swap", For: "1h"})
	reloadOK(t, d, path, strings.NewReplacer("rough, gauge: pirani, above: 0.01 Pa,", "rough, gauge: pirani, above: 0.02 Pa, for: 1s,",
		"max: 2h", "max: 4h").Replace(base), "alarms changed: rough\nchanged: shelving.max")
	before := storedCount(t, d, "pirani")
	waitFor(t, 10*time.Second, "more pirani samples", func() bool { return storedCount(t, d, "pirani") > before+3 })
	all, _ := alarmsNow(t, d)
	if a := all["rough"]; a.State != "shelved" || !a.Until.Equal(shelved.Until) || a.Reason != "pump swap" {
		t.Errorf("rough after the reload: state %s until %s (%q); want shelved until %s", a.State, a.Until, a.Reason, shelved.Until)
	}
	unshelved := alarmAction(t, d, "rough", "unshelve", AlarmActionJSON{By: "day shift"})
	if unshelved.State != "unacknowledged" {
		t.Errorf("rough unshelved: %s, want unacknowledged (still above its limit)", unshelved.State)
	}
	alarmAction(t, d, "rough", "shelve", AlarmActionJSON{Reason: "longer than the old 2 h maximum", For: "3h"})
	evs := historyOf(t, d, "rough")
	if k := kindsOf(evs); !slices.Equal(k, []string{"raised", "shelved", "unshelved", "shelved"}) {
		t.Errorf("history of rough: %v, want raised shelved unshelved shelved", k)
	}
	checkSeq(t, evs)
}

// An alarm removed by one reload and configured again by the next
// carries on from its stored state: the same raise count, and sequence
// numbers (dedupe keys) that go on from the last, none used twice.
func TestReloadRemovedAlarmComesBackNumberedOn(t *testing.T) {
	d, path := alarmDaemon(t, alarmReloadBase)
	alarmAction(t, d, "rough", "ack", AlarmActionJSON{})
	without := strings.Replace(alarmReloadBase, "  - {name: rough, gauge: pirani, above: 0.01 Pa, severity: high}\n", "", 1)
	reloadOK(t, d, path, without, "alarms removed: rough")
	reloadOK(t, d, path, alarmReloadBase, "alarms added: rough")
	all, _ := alarmsNow(t, d)
	if a := all["rough"]; a.State != "acknowledged" || a.Raised != 1 || a.Occurrence != 1 {
		t.Errorf("rough back: %+v; want its stored state, acknowledged, raised once", a)
	}
	alarmAction(t, d, "rough", "shelve", AlarmActionJSON{For: "1h"})
	alarmAction(t, d, "rough", "unshelve", AlarmActionJSON{})
	evs := historyOf(t, d, "rough")
	if k := kindsOf(evs); !slices.Equal(k, []string{"raised", "acknowledged", "shelved", "unshelved"}) {
		t.Errorf("history of rough: %v", k)
	}
	checkSeq(t, evs)
}

// While a hold test runs a reload that changes alarms (here with a gauge)
// is refused whole: neither the gauge nor the alarm is applied. After
// the test ends, the same reload applies both, and the new alarm on the
// new gauge is evaluated.
func TestReloadAlarmsWithGauges(t *testing.T) {
	d, path := alarmDaemon(t, alarmReloadBase)
	var h HoldTestJSON
	if code := apiCall(t, d, "POST", "/api/v1/holdtests", reloadToken,
		HoldTestStartJSON{Gauge: "pirani", Settle: "0s", Duration: "2m", Force: true}, &h); code != http.StatusCreated {
		t.Fatalf("hold test start: status %d", code)
	}
	mixed := strings.Replace(alarmReloadBase, "interval: 1s}\n", "interval: 1s}\n  fore: {link: bench, driver: sim, instrument: pirani, kind: pressure, interval: 1s}\n", 1) +
		"  - {name: fore-high, gauge: fore, above: 0.01 Pa, severity: medium}\n"
	writeConfig(t, path, mixed)
	code, out := postReload(t, d, reloadToken)
	if code != http.StatusConflict || out.Applied || !strings.Contains(out.Error, "hold test "+h.ID+" is running") {
		t.Fatalf("reload during hold test %s: status %d, %+v; want 409 naming the test", h.ID, code, out)
	}
	if _, names := alarmsNow(t, d); !slices.Equal(names, []string{"rough", "slow"}) || slices.Contains(d.GaugeNames(), "fore") {
		t.Errorf("a refused reload applied part of itself: alarms %v, gauges %v", names, d.GaugeNames())
	}

	waitFor(t, 20*time.Second, "the hold test to end", func() bool { return d.alarms.RunningHoldTest() == "" })
	code, out = postReload(t, d, reloadToken)
	if code != http.StatusOK || out.Changes != "gauges added: fore\nalarms added: fore-high" {
		t.Fatalf("reload after the hold test: status %d, %+v", code, out)
	}
	if !slices.Contains(d.GaugeNames(), "fore") {
		t.Errorf("gauges after the reload: %v, want fore among them", d.GaugeNames())
	}
	waitAlarm(t, d, "fore-high", func(a AlarmJSON) bool { return a.State == "unacknowledged" })
}

// An unacknowledged alarm removed by a reload is no longer reminded of:
// no one could acknowledge it any more.
func TestReloadRemovedAlarmStopsItsReminders(t *testing.T) {
	hook := httptest.NewServer(http.HandlerFunc(func(w http.ResponseWriter, r *http.Request) { io.Copy(io.Discard, r.Body) }))
	defer hook.Close()
	base := alarmReloadBase + `notify:
  - name: hook
    webhook: {url: "` + hook.URL + `/hook", secret_file: DIR/token}
    group_wait: 0s
    remind_every: 1h
`
	d, path := alarmDaemon(t, base)
	reminded := func() bool {
		var ok bool
		d.store.Bolt().View(func(tx *bolt.Tx) error {
			if b := tx.Bucket([]byte("notify-outbox")); b != nil {
				if n := b.Bucket([]byte("hook")); n != nil && n.Bucket([]byte("r")) != nil {
					ok = n.Bucket([]byte("r")).Get([]byte("rough")) != nil
				}
			}
			return nil
		})
		return ok
	}
	waitFor(t, 10*time.Second, "a reminder schedule for rough", reminded)
	reloadOK(t, d, path, strings.Replace(base, "  - {name: rough, gauge: pirani, above: 0.01 Pa, severity: high}\n", "", 1),
		"alarms removed: rough")
	if reminded() {
		t.Error("the removed rough is still reminded of")
	}
}

// An alarm whose gauge's unit a reload changes is built again in the new
// unit, keeping its state: its limit now reads in mbar.
func TestReloadGaugeUnitRebuildsItsAlarms(t *testing.T) {
	d, path := alarmDaemon(t, alarmReloadBase)
	before := alarmDef(d, "rough")
	reloadOK(t, d, path, strings.Replace(alarmReloadBase, "instrument: pirani, kind: pressure,", "instrument: pirani, kind: pressure, unit: mbar,", 1),
		"gauges changed: pirani")
	a := waitAlarm(t, d, "rough", func(a AlarmJSON) bool { return strings.Contains(a.LimitText, "mbar") })
	if a.State != "unacknowledged" || a.Raised != 1 || alarmDef(d, "rough") == before {
		t.Errorf("rough after its gauge's unit changed: %+v; want built again, still unacknowledged, raised once", a)
	}
}
