package alarmstore

import (
	"bufio"
	"math"
	"os"
	"os/exec"
	"path/filepath"
	"slices"
	"strings"
	"syscall"
	"testing"
	"time"

	bolt "go.etcd.io/bbolt"

	"holdfast/alerts"
	"holdfast/calib"
)

var t0 = time.Date(2026, 3, 1, 22, 0, 0, 0, time.UTC)

func testAlarms() []*alerts.Alarm {
	u, _ := calib.LookupUnit("Pa")
	return []*alerts.Alarm{{Name: "rough-lost", Gauge: "chamber", Severity: "high", OnDelay: 30 * time.Second,
		Rule: &alerts.Limit{Gauge: "chamber", Above: 10, Below: math.NaN(), Unit: u}}}
}

func sample(v float64, sec int) calib.Sample {
	return calib.Sample{At: t0.Add(time.Duration(sec) * time.Second), Value: v, Quality: calib.QualityOK}
}

func openEngine(t testing.TB, path string) (*alerts.Engine, *bolt.DB, []alerts.Event) {
	db, err := bolt.Open(path, 0o600, &bolt.Options{Timeout: 5 * time.Second})
	if err != nil {
		t.Fatal(err)
	}
	st, err := Open(db)
	if err != nil {
		t.Fatal(err)
	}
	e := alerts.NewEngine(testAlarms())
	pending, err := e.Attach(st)
	if err != nil {
		t.Fatal(err)
	}
	return e, db, pending
}

// notify appends the event's dedupe key to the "sent" file and syncs it,
// as a durable outbox would, before the engine is told it was delivered.
func notify(t testing.TB, sent string, e *alerts.Engine, ev alerts.Event, markDelivered bool) {
	f, err := os.OpenFile(sent, os.O_APPEND|os.O_CREATE|os.O_WRONLY, 0o600)
	if err != nil {
		t.Fatal(err)
	}
	if _, err := f.WriteString(ev.DedupeKey + "\n"); err != nil {
		t.Fatal(err)
	}
	if err := f.Sync(); err != nil {
		t.Fatal(err)
	}
	f.Close()
	if markDelivered {
		if err := e.Delivered(ev.DedupeKey); err != nil {
			t.Fatal(err)
		}
	}
}

// TestHelperProcess is the daemon side of TestKilledWithAlarmActive: it
// raises the alarm, "sends" it, says ready and waits to be killed.
func TestHelperProcess(t *testing.T) {
	dir := os.Getenv("HOLDFAST_ALARM_HELPER")
	if dir == "" {
		t.Skip("helper process for TestKilledWithAlarmActive")
	}
	e, _, _ := openEngine(t, filepath.Join(dir, "holdfast.db"))
	deliver := os.Getenv("HOLDFAST_ALARM_DELIVER") == "yes"
	for sec, v := range []float64{5, 12, 12, 12, 12, 12} {
		for _, ev := range e.Observe("chamber", sample(v, 10*sec)) {
			if ev.Transition() {
				notify(t, filepath.Join(dir, "sent"), e, ev, deliver)
			}
		}
	}
	os.Stdout.WriteString("ready\n")
	select {} // killed here, with the database open
}

// A daemon killed with SIGKILL while an alarm is active restarts with the
// alarm still active and unacknowledged, sends no second notification for
// the raise (its dedupe key is unchanged and is only handed over again when
// the kill came before the delivery was recorded), and goes on numbering
// transitions after the stored ones.
func TestKilledWithAlarmActive(t *testing.T) {
	for _, deliver := range []string{"yes", "no"} {
		t.Run("delivered="+deliver, func(t *testing.T) {
			dir := t.TempDir()
			cmd := exec.Command(os.Args[0], "-test.run=^TestHelperProcess$", "-test.v")
			cmd.Env = append(os.Environ(), "HOLDFAST_ALARM_HELPER="+dir, "HOLDFAST_ALARM_DELIVER="+deliver)
			out, err := cmd.StdoutPipe()
			if err != nil {
				t.Fatal(err)
			}
			if err := cmd.Start(); err != nil {
				t.Fatal(err)
			}
			sc := bufio.NewScanner(out)
			for sc.Scan() && sc.Text() != "ready" {
			}
			if err := cmd.Process.Signal(syscall.SIGKILL); err != nil {
				t.Fatal(err)
			}
			_ = cmd.Wait()

			sent := filepath.Join(dir, "sent")
			e, db, pending := openEngine(t, filepath.Join(dir, "holdfast.db"))
			defer db.Close()
			st, err := Open(db) // the same file after a kill: the same instance id
			if err != nil {
				t.Fatal(err)
			}
			in := st.Instance() + "/"
			if st.Renewed() != "" {
				t.Errorf("instance id renewed after a kill (%s); want it kept", st.Renewed())
			}
			if deliver == "yes" && len(pending) != 0 {
				t.Errorf("after a recorded delivery, %d events are handed over again", len(pending))
			}
			if deliver == "no" && (len(pending) != 1 || pending[0].DedupeKey != in+"rough-lost/1/unacknowledged") {
				t.Errorf("undelivered after the kill: %v; want the raise again under its own key", pending)
			}
			for _, ev := range pending {
				notify(t, sent, e, ev, true)
			}
			s := e.Status()[0]
			if !s.Active || s.State != alerts.Unacknowledged || s.Raised != 1 {
				t.Fatalf("after restart: active %v state %s raised %d; want active, unacknowledged, 1", s.Active, s.State, s.Raised)
			}
			if evs := e.Observe("chamber", sample(12, 70)); len(evs) != 0 {
				t.Errorf("still above the limit after restart: events %v, want none", evs)
			}
			for _, ev := range e.Observe("chamber", sample(5, 80)) {
				notify(t, sent, e, ev, true)
			}
			b, err := os.ReadFile(sent)
			if err != nil {
				t.Fatal(err)
			}
			keys := strings.Fields(string(b))
			uniq := slices.Compact(slices.Sorted(slices.Values(keys)))
			want := []string{in + "rough-lost/1/unacknowledged", in + "rough-lost/2/returned-unacknowledged"}
			if !slices.Equal(uniq, want) {
				t.Errorf("keys sent %v, want exactly %v", uniq, want)
			}
			if deliver == "yes" && len(keys) != len(uniq) {
				t.Errorf("sent %v: a transition went out twice", keys)
			}
			hist, err := (&Store{db: db}).History("rough-lost", time.Time{}, 0)
			if err != nil || len(hist) != 2 {
				t.Errorf("history: %d events, %v; want the raise and the return", len(hist), err)
			}
		})
	}
}
