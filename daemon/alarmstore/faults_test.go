package alarmstore

import (
	"errors"
	"os"
	"path/filepath"
	"slices"
	"testing"
	"time"

	bolt "go.etcd.io/bbolt"

	"holdfast/alerts"
)

// failingStore is the real store with writes refused on demand, as on a
// full disk: while fail is set, Save fails and stores nothing.
type failingStore struct {
	*Store
	fail  bool
	saves int // failed attempts
}

func (f *failingStore) Save(states []alerts.Saved, events []alerts.Event) error {
	if f.fail {
		f.saves++
		return errors.New("write holdfast.db: no space left on device (injected)")
	}
	return f.Store.Save(states, events)
}

// attachFailing opens the store at path behind a failingStore and starts
// an engine on it.
func attachFailing(t *testing.T, path string) (*alerts.Engine, *failingStore, *bolt.DB) {
	t.Helper()
	db, err := bolt.Open(path, 0o600, &bolt.Options{Timeout: 5 * time.Second})
	if err != nil {
		t.Fatal(err)
	}
	st, err := Open(db)
	if err != nil {
		t.Fatal(err)
	}
	fs := &failingStore{Store: st}
	e := alerts.NewEngine(testAlarms())
	if _, err := e.Attach(fs); err != nil {
		t.Fatal(err)
	}
	return e, fs, db
}

// handed collects the transitions the engine hands over (what the daemon
// would queue for notification).
func handed(evs []alerts.Event, into *[]alerts.Event) {
	for _, ev := range evs {
		if ev.Transition() {
			*into = append(*into, ev)
		}
	}
}

// A transition whose save fails is saved again on the next step, in
// order, and is handed over for notification only once stored, exactly
// once: after the disk-full episode the history holds every transition.
func TestFailedSaveIsRetriedInOrder(t *testing.T) {
	e, fs, db := attachFailing(t, filepath.Join(t.TempDir(), "holdfast.db"))
	defer db.Close()
	var out []alerts.Event
	fs.fail = true
	// Above 10 Pa for the 30 s on-delay: raised at 30 s; below at 40 s: cleared.
	for _, s := range []struct {
		v   float64
		sec int
	}{{12, 0}, {12, 30}, {5, 40}} {
		handed(e.Observe("chamber", sample(s.v, s.sec)), &out)
	}
	if fs.saves == 0 || e.StoreError() == nil {
		t.Fatalf("saves failed %d times, store error %v; want the injected failure seen", fs.saves, e.StoreError())
	}
	if len(out) != 0 {
		t.Errorf("handed over before being stored: %v", out)
	}
	fs.fail = false
	handed(e.Tick(t0.Add(41*time.Second)), &out)
	handed(e.Tick(t0.Add(42*time.Second)), &out)
	if e.StoreError() != nil {
		t.Errorf("store error after writes work again: %v", e.StoreError())
	}
	wantKinds := []alerts.EventKind{alerts.Raised, alerts.Cleared}
	if got := eventKinds(out); !slices.Equal(got, wantKinds) {
		t.Errorf("handed over %v, want %v once each", got, wantKinds)
	}
	hist, err := fs.History("rough-lost", time.Time{}, 0)
	if err != nil {
		t.Fatal(err)
	}
	if got := eventKinds(hist); !slices.Equal(got, wantKinds) {
		t.Errorf("history %v, want %v", got, wantKinds)
	}
	und, err := fs.Undelivered()
	if err != nil || len(und) != 2 || und[0].DedupeKey != out[0].DedupeKey || und[1].DedupeKey != out[1].DedupeKey {
		t.Errorf("undelivered %v, %v; want both transitions under the keys handed over", und, err)
	}
}

// A crash while saves fail must not make the next transition reuse a key
// already handed over: nothing unsaved is handed over, and after the
// restart numbering goes on from what was stored.
func TestCrashWhileSavesFailReusesNoKey(t *testing.T) {
	path := filepath.Join(t.TempDir(), "holdfast.db")
	e, fs, db := attachFailing(t, path)
	var out []alerts.Event
	handed(e.Observe("chamber", sample(12, 0)), &out)
	handed(e.Observe("chamber", sample(12, 30)), &out) // raised, stored
	fs.fail = true
	handed(e.Observe("chamber", sample(5, 40)), &out) // cleared, not stored
	db.Close()                                        // the crash: what was not stored is gone

	e, _, db = attachFailing(t, path)
	defer db.Close()
	handed(e.Observe("chamber", sample(5, 50)), &out)  // cleared after the restart
	handed(e.Observe("chamber", sample(12, 60)), &out) // pending again
	handed(e.Observe("chamber", sample(12, 90)), &out) // raised again
	keys := map[string]alerts.EventKind{}
	for _, ev := range out {
		if k, dup := keys[ev.DedupeKey]; dup {
			t.Errorf("key %s handed over for %s and again for %s", ev.DedupeKey, k, ev.Kind)
		}
		keys[ev.DedupeKey] = ev.Kind
	}
	if len(out) != 3 {
		t.Errorf("handed over %v; want raised, cleared, raised", eventKinds(out))
	}
}

func eventKinds(evs []alerts.Event) []alerts.EventKind {
	out := make([]alerts.EventKind, len(evs))
	for i, ev := range evs {
		out[i] = ev.Kind
	}
	return out
}

// copyFile copies a store file as a person restoring a backup would; into
// an existing file it keeps that file (and so its identity), as cp does.
func copyFile(t *testing.T, from, to string) {
	t.Helper()
	b, err := os.ReadFile(from)
	if err != nil {
		t.Fatal(err)
	}
	if err := os.WriteFile(to, b, 0o600); err != nil {
		t.Fatal(err)
	}
}

// raiseOnce raises the test alarm in the store at path and returns the
// keys of the transitions handed over (raise, then clear).
func raiseOnce(t *testing.T, path string) []string {
	t.Helper()
	e, _, db := attachFailing(t, path)
	defer db.Close()
	var out []alerts.Event
	for _, s := range []struct {
		v   float64
		sec int
	}{{12, 0}, {12, 30}, {5, 40}} {
		handed(e.Observe("chamber", sample(s.v, s.sec)), &out)
	}
	var keys []string
	for _, ev := range out {
		keys = append(keys, ev.DedupeKey)
	}
	if len(keys) != 2 {
		t.Fatalf("transitions %v; want raised and cleared", eventKinds(out))
	}
	return keys
}

// Dedupe keys are unique forever: a fresh file, a second fresh file and a
// file restored from a backup of the first (copied to a new file, or
// copied over the old one after holdfast db backup marked the copy) never
// hand over a key another one did, though all number their transitions
// from 1.
func TestKeysNeverRepeatAcrossFreshAndRestoredFiles(t *testing.T) {
	dir := t.TempDir()
	a, b := filepath.Join(dir, "a.db"), filepath.Join(dir, "b.db")
	backup := filepath.Join(dir, "backup.db")
	// An empty store a, backed up before its first alarm.
	_, _, db := attachFailing(t, a)
	db.Close()
	copyFile(t, a, backup)
	marked := filepath.Join(dir, "marked.db")
	copyFile(t, a, marked)
	mdb, err := bolt.Open(marked, 0o600, nil)
	if err != nil {
		t.Fatal(err)
	}
	if err := MarkCopy(mdb); err != nil {
		t.Fatal(err)
	}
	mdb.Close()

	seen := map[string]string{}
	record := func(where string, keys []string) {
		for _, k := range keys {
			if w, dup := seen[k]; dup {
				t.Errorf("key %s handed over by %s and again by %s", k, w, where)
			}
			seen[k] = where
		}
	}
	record("the first file", raiseOnce(t, a))
	record("a second fresh file", raiseOnce(t, b))
	restored := filepath.Join(dir, "restored.db")
	copyFile(t, backup, restored)
	record("the backup restored to a new file", raiseOnce(t, restored))
	copyFile(t, marked, a) // over the first file, keeping its identity
	record("a marked backup restored over the first file", raiseOnce(t, a))
	record("the first file again (no restore)", raiseOnce(t, a))
	if len(seen) != 10 {
		t.Errorf("%d distinct keys, want 10", len(seen))
	}
}
