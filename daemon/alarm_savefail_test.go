package daemon

import (
	"errors"
	"log/slog"
	"math"
	"net"
	"net/http"
	"slices"
	"strings"
	"testing"
	"time"

	"holdfast/alerts"
	"holdfast/calib"
	"holdfast/daemon/alarmstore"
)

// refusingAlarmStore is the daemon's real alarm store with writes refused
// on demand, as on a full disk.
type refusingAlarmStore struct {
	*alarmstore.Store
	fail bool
}

func (s *refusingAlarmStore) Save(states []alerts.Saved, events []alerts.Event) error {
	if s.fail {
		return errors.New("write holdfast.db: no space left on device (injected)")
	}
	return s.Store.Save(states, events)
}

// After a disk-full episode in which alarm saves failed, the history holds
// every transition, in order, and the webhook received each exactly once,
// in the same order, under the key the history keeps.
func TestAlarmSavesFailThenRecover(t *testing.T) {
	dir := t.TempDir()
	writeSecret(t, dir, "hook.key", "save-fail secret")
	rc := &receiver{secret: []byte("save-fail secret"), got: map[string]int{}, all: make(chan string, 100)}
	ln, err := net.Listen("tcp", "127.0.0.1:0")
	if err != nil {
		t.Fatal(err)
	}
	srv := &http.Server{Handler: rc}
	go srv.Serve(ln)
	defer srv.Close()
	cfg, err := parseNotify(t, dir, `
notify:
  - name: hook
    webhook: {url: "http://`+ln.Addr().String()+`/hook", secret_file: DIR/hook.key}
    group_wait: 0s
    retry: {min: 20ms, max: 100ms}
`)
	if err != nil {
		t.Fatal(err)
	}
	d := testDaemon(t)
	d.cfgp.Store(cfg)
	if d.ntf, err = newNotifierSet(cfg, d.store.Bolt(), wallClock{}, slog.New(slog.DiscardHandler)); err != nil {
		t.Fatal(err)
	}
	go d.ntf.ob.Run(t.Context())
	pa, _ := calib.LookupUnit("Pa")
	d.alarms = alerts.NewEngine([]*alerts.Alarm{{Name: "rough-lost", Gauge: "chamber", Severity: "high",
		Rule: &alerts.Limit{Gauge: "chamber", Above: 10, Below: math.NaN(), Unit: pa}}})
	st, err := alarmstore.Open(d.store.Bolt())
	if err != nil {
		t.Fatal(err)
	}
	as := &refusingAlarmStore{Store: st}
	if _, err := d.alarms.Attach(as); err != nil {
		t.Fatal(err)
	}
	log := slog.New(slog.DiscardHandler)
	t0 := time.Date(2031, 5, 6, 1, 0, 0, 0, time.UTC)
	observe := func(v float64, sec int) {
		for _, ev := range d.alarms.Observe("chamber", calib.Sample{At: t0.Add(time.Duration(sec) * time.Second), Value: v, Quality: calib.QualityOK}) {
			d.alarmEvent(log, ev)
		}
	}
	observe(5, 0)
	as.fail = true
	observe(12, 10) // raised
	observe(5, 20)  // cleared
	observe(12, 30) // raised again
	as.fail = false
	for _, ev := range d.alarms.Tick(t0.Add(31 * time.Second)) {
		d.alarmEvent(log, ev)
	}
	observe(5, 40) // cleared, stored at once

	hist, err := st.History("rough-lost", time.Time{}, 0)
	if err != nil {
		t.Fatal(err)
	}
	wantKinds := []alerts.EventKind{alerts.Raised, alerts.Cleared, alerts.Raised, alerts.Cleared}
	var kinds []alerts.EventKind
	var keys []string
	for _, ev := range hist {
		kinds = append(kinds, ev.Kind)
		keys = append(keys, cfg.Chamber.Name+"/"+ev.DedupeKey)
	}
	if !slices.Equal(kinds, wantKinds) {
		t.Fatalf("history %v, want %v", kinds, wantKinds)
	}
	for range keys {
		select {
		case <-rc.all:
		case <-time.After(20 * time.Second):
			t.Fatalf("receiver has %v; want %v", rc.got, keys)
		}
	}
	rc.mu.Lock()
	defer rc.mu.Unlock()
	if !slices.Equal(rc.order, keys) {
		t.Errorf("received in order %v, want %v", rc.order, keys)
	}
	for k, n := range rc.got {
		if n != 1 || !strings.HasPrefix(k, cfg.Chamber.Name+"/"+st.Instance()+"/") {
			t.Errorf("key %s received %d times; want once, under the file's instance id", k, n)
		}
	}
}
