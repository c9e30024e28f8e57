package daemon

import (
	"log/slog"
	"path/filepath"
	"testing"
	"time"

	bolt "go.etcd.io/bbolt"

	"holdfast/alerts"
	"holdfast/daemon/config"
)

// A transition whose queueing fails (the store refuses writes) waits, and
// the next one is queued behind it, never before it: when the store works
// again, delivering "cleared" first queues the waiting "raised".
func TestDeliveriesWaitInOrderWhileQueueingFails(t *testing.T) {
	cfg, err := config.ParseConfig("order.yaml", []byte(`
chamber: {name: order, volume: 10 L}
store: {dir: /nonexistent}
links: {s: {simulator: {rough_pump: {speed: 2 m3/h}}}}
gauges: {p: {link: s, driver: sim, instrument: pirani, kind: pressure}}
notify:
  - {name: run, exec: {command: /bin/true}}
`))
	if err != nil {
		t.Fatal(err)
	}
	d := testDaemon(t, fakeGauge("p", time.Second, nil))
	d.cfgp.Store(cfg)
	openSet := func(name string) (*notifierSet, *bolt.DB) {
		db, err := bolt.Open(filepath.Join(t.TempDir(), name), 0o600, nil)
		if err != nil {
			t.Fatal(err)
		}
		n, err := newNotifierSet(cfg, db, wallClock{}, slog.New(slog.DiscardHandler))
		if err != nil {
			t.Fatal(err)
		}
		return n, db
	}
	broken, db := openSet("broken.db")
	db.Close() // every write now fails
	d.ntf = broken
	t0 := time.Date(2031, 1, 1, 0, 0, 0, 0, time.UTC)
	raised, cleared := raiseEvent("vac", alerts.Raised, t0), raiseEvent("vac", alerts.Cleared, t0.Add(time.Minute))
	d.deliver(raised)
	if len(d.retry) != 1 {
		t.Fatalf("waiting: %v; want the raise", d.retry)
	}
	working, db2 := openSet("working.db")
	defer db2.Close()
	d.ntf = working // the store works again before the next alarm tick
	d.deliver(cleared)
	if len(d.retry) != 0 {
		t.Errorf("still waiting: %v", d.retry)
	}
	hs, err := working.ob.Health()
	if err != nil || len(hs) != 1 || hs[0].Queued != 2 {
		t.Errorf("outbox health %v, %v; want both transitions queued", hs, err)
	}
}
