package daemon

import (
	"context"
	"encoding/json"
	"io"
	"log/slog"
	"net/http"
	"path/filepath"
	"strings"
	"sync"
	"testing"
	"testing/synctest"
	"time"

	"github.com/prometheus/client_golang/prometheus/testutil"
	bolt "go.etcd.io/bbolt"

	"holdfast/alerts"
	"holdfast/alerts/notify"
	"holdfast/drivers/sim"
)

// fakeAM is an Alertmanager's POST /api/v2/alerts held in memory (an
// http.RoundTripper, so it runs inside a synctest bubble). It checks what
// Alertmanager 0.25 checks of each alert (types.Alert Validate: a label,
// and an end that is not before the start: "start time must be before end
// time"), plus that startsAt is not ahead of the wall clock, and answers
// 400 as Alertmanager does.
type fakeAM struct {
	mu     sync.Mutex
	posts  int
	last   map[string]notify.AMAlert // by alarm label
	refuse string                    // answer 400 to any post holding this alarm
}

func (f *fakeAM) RoundTrip(r *http.Request) (*http.Response, error) {
	answer := func(code int, msg string) (*http.Response, error) {
		return &http.Response{StatusCode: code, Body: io.NopCloser(strings.NewReader(msg)), Request: r}, nil
	}
	if r.Method != http.MethodPost || r.URL.Path != "/api/v2/alerts" {
		return answer(http.StatusNotFound, "not found")
	}
	var alerts []notify.AMAlert
	if err := json.NewDecoder(r.Body).Decode(&alerts); err != nil {
		return answer(http.StatusBadRequest, err.Error())
	}
	f.mu.Lock()
	defer f.mu.Unlock()
	f.posts++
	for _, a := range alerts {
		switch {
		case len(a.Labels) == 0:
			return answer(http.StatusBadRequest, "at least one label pair required")
		case a.EndsAt.Before(a.StartsAt):
			return answer(http.StatusBadRequest, "start time must be before end time")
		case a.StartsAt.After(time.Now()):
			return answer(http.StatusBadRequest, "invented check: startsAt ahead of the wall clock")
		case a.Labels["alarm"] == f.refuse:
			return answer(http.StatusBadRequest, "invented refusal of "+f.refuse)
		}
	}
	for _, a := range alerts {
		f.last[a.Labels["alarm"]] = a
	}
	return answer(http.StatusOK, "")
}

// amHarness is the notifier set of a daemon whose clock is the demo's
// (simulated, 600 times the wall), posting to a fakeAM, inside a bubble.
type amHarness struct {
	d    *Daemon
	n    *notifierSet
	am   *fakeAM
	clk  *sim.Clock
	stop func()
}

func newAMHarness(t *testing.T, extra string, am *fakeAM) *amHarness {
	t.Helper()
	dir := t.TempDir()
	cfg, err := parseNotify(t, dir, `
notify:
  - name: site-am
    alertmanager: {url: "http://alertmanager.example.internal:9093", resend_every: 1m, daemon_url: "http://bench-pc.example.internal:9781"}
    group_wait: 0s
    retry: {min: 10s, max: 1m}
`+extra)
	if err != nil {
		t.Fatal(err)
	}
	db, err := bolt.Open(filepath.Join(dir, "n.db"), 0o600, nil)
	if err != nil {
		t.Fatal(err)
	}
	clk := sim.NewClock(time.Now(), 600)
	n, err := newNotifierSet(cfg, db, clk, slog.New(slog.DiscardHandler))
	if err != nil {
		t.Fatal(err)
	}
	n.sinks[0].am.Client = &http.Client{Transport: am}
	d := &Daemon{clock: clk, log: slog.New(slog.DiscardHandler), ntf: n, emit: func(Event) {}}
	d.cfgp.Store(cfg)
	d.alarms = alerts.NewEngine(d.limits())
	if _, err := d.alarms.Attach(nil); err != nil {
		t.Fatal(err)
	}
	ctx, cancel := context.WithCancel(t.Context())
	done := make(chan struct{})
	go func() { n.run(ctx, d); close(done) }()
	return &amHarness{d: d, n: n, am: am, clk: clk, stop: func() { cancel(); <-done; db.Close() }}
}

func (h *amHarness) event(alarm string, kind alerts.EventKind) {
	if err := h.d.notify(raiseEvent(alarm, kind, h.clk.Now())); err != nil {
		panic(err)
	}
}

// Under the demo's clock (600 simulated seconds per wall second) the
// notifier posts wall times Alertmanager takes: every post is accepted,
// the raise carries alarm, generatorURL and startsAt in wall time, re-posts
// are counted as result="repost" (not "delivered"), and the last-success
// time is the last delivery's, not the last re-post's.
func TestAlertmanagerOnDemoClock(t *testing.T) {
	synctest.Test(t, func(t *testing.T) {
		am := &fakeAM{last: map[string]notify.AMAlert{}}
		h := newAMHarness(t, "", am)
		defer h.stop()
		wallStart := time.Now()
		h.event("rough-vacuum-lost", alerts.Raised)
		time.Sleep(time.Second) // 10 simulated minutes: 10 re-posts
		synctest.Wait()
		clearAt := h.clk.Now()
		h.event("rough-vacuum-lost", alerts.Cleared)
		time.Sleep(200 * time.Millisecond) // 2 simulated minutes: 2 re-posts as resolved
		synctest.Wait()

		am.mu.Lock()
		a := am.last["rough-vacuum-lost"]
		am.mu.Unlock()
		if a.GeneratorURL != "http://bench-pc.example.internal:9781/api/v1/alarms/history?alarm=rough-vacuum-lost" {
			t.Errorf("generatorURL %q", a.GeneratorURL)
		}
		// Raised at simulated 0 = wall 0; cleared at simulated 10 min = wall 1 s.
		if !a.StartsAt.Equal(wallStart) || !a.EndsAt.Equal(wallStart.Add(time.Second)) {
			t.Errorf("resolved alert %v to %v, want %v to 1 s later (wall)", a.StartsAt, a.EndsAt, wallStart)
		}
		hs, _ := h.n.ob.Health()
		if hs[0].Delivered != 2 || hs[0].Failed != 0 || hs[0].Refused != 0 {
			t.Errorf("outbox health %+v, want 2 delivered, nothing failed or parked", hs[0])
		}
		if !hs[0].LastSuccess.Equal(clearAt) {
			t.Errorf("last success %v, want the clear's delivery %v (re-posts after it do not move it)", hs[0].LastSuccess, clearAt)
		}
		// Re-posts at simulated 1..12 min: 10 while firing, 2 resolved.
		want := `
# HELP holdfast_notify_deliveries_total ` + helpDeliveries + `
# TYPE holdfast_notify_deliveries_total counter
holdfast_notify_deliveries_total{notifier="site-am",result="delivered"} 2
holdfast_notify_deliveries_total{notifier="site-am",result="failed"} 0
holdfast_notify_deliveries_total{notifier="site-am",result="parked"} 0
holdfast_notify_deliveries_total{notifier="site-am",result="repost"} 12
holdfast_notify_deliveries_total{notifier="site-am",result="repost_failed"} 0
# HELP holdfast_notify_queue_length Notifications waiting in the durable outbox for the notifier.
# TYPE holdfast_notify_queue_length gauge
holdfast_notify_queue_length{notifier="site-am"} 0
# HELP holdfast_notify_oldest_queued_age_seconds ` + helpOldest + `
# TYPE holdfast_notify_oldest_queued_age_seconds gauge
holdfast_notify_oldest_queued_age_seconds{notifier="site-am"} 0
`
		if err := testutil.CollectAndCompare(notifyCollector{d: h.d}, strings.NewReader(want),
			"holdfast_notify_deliveries_total", "holdfast_notify_queue_length", "holdfast_notify_oldest_queued_age_seconds"); err != nil {
			t.Error(err)
		}
	})
}

// A transition Alertmanager refuses with a 400 is parked and the queue goes
// on: the transitions after it are delivered; the parked one shows in the
// alarm history with the refusal, is counted, and raises the
// notify_refused health alarm, which clears an hour later. A refused
// notification about that health alarm itself does not keep it going.
func TestRefusedNotificationParked(t *testing.T) {
	synctest.Test(t, func(t *testing.T) {
		am := &fakeAM{last: map[string]notify.AMAlert{}, refuse: "b"}
		h := newAMHarness(t, `
alarms:
  - {name: notifications-refused, health: notify_refused, severity: high}
`, am)
		defer h.stop()
		for _, alarm := range []string{"a", "b", "c"} {
			h.event(alarm, alerts.Raised)
		}
		synctest.Wait()
		time.Sleep(time.Millisecond)
		synctest.Wait()
		am.mu.Lock()
		_, gotA := am.last["a"]
		_, gotC := am.last["c"]
		am.mu.Unlock()
		if !gotA || !gotC {
			t.Errorf("alertmanager has %v; want a and c, delivered past the refused b", am.last)
		}
		hs, _ := h.n.ob.Health()
		if hs[0].Queued != 0 || hs[0].Parked != 1 || hs[0].Refused != 1 {
			t.Errorf("outbox health %+v, want nothing queued and b parked", hs[0])
		}
		hist := h.d.parkedHistory("", time.Time{})
		if len(hist) != 1 || hist[0].Kind != "notify-parked" || hist[0].Alarm != "b" || hist[0].Notifier != "site-am" ||
			!strings.Contains(hist[0].Message, "400 Bad Request: invented refusal of b") {
			t.Fatalf("history of parked notifications %+v", hist)
		}
		if got := h.d.parkedHistory("a", time.Time{}); len(got) != 0 {
			t.Errorf("history of alarm a lists %+v", got)
		}
		merged := withParked([]EventJSON{{At: hist[0].At.Add(-time.Second), Alarm: "b"}, {At: hist[0].At.Add(time.Second), Alarm: "b"}}, hist, 0)
		if len(merged) != 3 || merged[1].Kind != "notify-parked" {
			t.Errorf("merged history %+v, want the parked entry between the two", merged)
		}
		want := `
# HELP holdfast_notify_parked_notifications ` + helpParked + `
# TYPE holdfast_notify_parked_notifications gauge
holdfast_notify_parked_notifications{notifier="site-am"} 1
`
		if err := testutil.CollectAndCompare(notifyCollector{d: h.d}, strings.NewReader(want), "holdfast_notify_parked_notifications"); err != nil {
			t.Error(err)
		}

		h.d.observeHealth(h.d.log, h.clk.Now())
		synctest.Wait() // its raise is delivered
		if st := alarmNamed(h.d, "notifications-refused"); !st.Active {
			t.Errorf("health alarm %+v, want it active after a notification was parked", st)
		}
		// Its own raise is refused too (the fake refuses it from now on):
		// parked, but not counted towards it.
		am.mu.Lock()
		am.refuse = "notifications-refused"
		am.mu.Unlock()
		h.event("notifications-refused", alerts.Raised)
		synctest.Wait()
		time.Sleep(time.Millisecond)
		synctest.Wait()
		if hs, _ := h.n.ob.Health(); hs[0].Parked != 2 {
			t.Errorf("%d parked, want 2 (b and the health alarm's own raise)", hs[0].Parked)
		}
		if n := h.d.refusedLately(h.clk.Now()); n != 1 {
			t.Errorf("refused lately: %d, want 1 (the health alarm's own refusal left out)", n)
		}
		time.Sleep(time.Duration(float64(refusedWindow+time.Minute) / h.clk.Speed()))
		synctest.Wait()
		h.d.observeHealth(h.d.log, h.clk.Now())
		if st := alarmNamed(h.d, "notifications-refused"); st.Active {
			t.Errorf("health alarm %+v, want it cleared an hour after the refusal", st)
		}
	})
}

func alarmNamed(d *Daemon, name string) alerts.AlarmStatus {
	for _, s := range d.Alarms() {
		if s.Alarm == name {
			return s
		}
	}
	return alerts.AlarmStatus{}
}
