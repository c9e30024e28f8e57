package calibstore

import (
	"errors"
	"math"
	"path/filepath"
	"sync"
	"testing"
	"time"

	bolt "go.etcd.io/bbolt"

	"holdfast/calib"
)

func openDB(t *testing.T, path string) *bolt.DB {
	t.Helper()
	db, err := bolt.Open(path, 0o600, &bolt.Options{Timeout: time.Second})
	if err != nil {
		t.Fatal(err)
	}
	return db
}

// heatLossCal fits the heat-loss model to points on the curve of
// REFERENCES.md §5b (a = 0.5 mW/Pa, p_t = 100 Pa; S0 = 2 mW is our choice).
func heatLossCal(t *testing.T, gauge string) *calib.Calibration {
	t.Helper()
	h := calib.HeatLoss{S0: 2, A: 0.5, Pt: 100}
	var pts []calib.Point
	for _, p := range []float64{0.5, 2, 10, 50, 200, 1000} {
		pts = append(pts, calib.Point{Raw: h.Signal(p), Reference: p})
	}
	c, err := calib.Fit(calib.ModelHeatLoss, pts, calib.FitOptions{})
	if err != nil {
		t.Fatal(err)
	}
	c.Gauge = gauge
	return c
}

func TestVersionsKeepOneActivePerGauge(t *testing.T) {
	path := filepath.Join(t.TempDir(), "c.db")
	db := openDB(t, path)
	s := New(db)
	if err := s.Init(); err != nil {
		t.Fatal(err)
	}
	t0 := time.Date(2026, 3, 2, 9, 0, 0, 0, time.UTC)
	var ids []uint32
	for i, g := range []string{"foreline", "foreline", "chamber"} {
		r, err := s.Add(Record{Gauge: g, Model: "heat-loss", Calibration: heatLossCal(t, g), Created: t0.Add(time.Duration(i) * time.Minute)})
		if err != nil {
			t.Fatal(err)
		}
		if r.State() != "inactive" {
			t.Errorf("new version %d is %s; want inactive", r.ID, r.State())
		}
		ids = append(ids, r.ID)
	}
	if ids[0] == 0 || ids[1] != ids[0]+1 || ids[2] != ids[1]+1 {
		t.Fatalf("ids %v; want consecutive from 1 (0 means the instrument's own curve)", ids)
	}
	rep, _, err := s.Activate(ids[0], t0.Add(time.Hour), "first")
	if err != nil || rep != 0 {
		t.Fatalf("activate %d: replaced %d, %v; want 0, nil", ids[0], rep, err)
	}
	rep, r, err := s.Activate(ids[1], t0.Add(2*time.Hour), "better fit")
	if err != nil || rep != ids[0] || r.State() != "active" {
		t.Fatalf("activate %d: replaced %d, state %s, %v", ids[1], rep, r.State(), err)
	}
	if _, _, err := s.Activate(ids[2], t0.Add(2*time.Hour), ""); err != nil {
		t.Fatal(err)
	}
	db.Close()

	// Reopened, the state is the one committed.
	db = openDB(t, path)
	defer db.Close()
	s = New(db)
	active, err := s.Active()
	if err != nil {
		t.Fatal(err)
	}
	if len(active) != 2 || active["foreline"] != ids[1] || active["chamber"] != ids[2] {
		t.Errorf("active = %v; want foreline→%d, chamber→%d", active, ids[1], ids[2])
	}
	old, err := s.Get(ids[0])
	if err != nil {
		t.Fatal(err)
	}
	if old.State() != "retired" || !old.Retired.Equal(t0.Add(2*time.Hour)) || len(old.History) != 3 {
		t.Errorf("replaced version: state %s, retired %s, history %v", old.State(), old.Retired, old.History)
	}
	// The stored calibration still evaluates (its curve is rebuilt from JSON):
	// 10 Pa on the §5b curve gives S = 2 + 4.5455 mW.
	p, err := old.Calibration.Apply(2 + 0.5*10/(1+10.0/100))
	if err != nil || math.Abs(p-10)/10 > 1e-6 {
		t.Errorf("stored calibration gives %g Pa, %v; want 10 Pa (REFERENCES.md §5b)", p, err)
	}
	list, err := s.List("foreline")
	if err != nil || len(list) != 2 {
		t.Errorf("List(foreline) = %d records, %v; want 2", len(list), err)
	}
	if _, err := s.Get(99); !errors.Is(err, ErrNotFound) {
		t.Errorf("Get(99) = %v; want ErrNotFound", err)
	}
	audits, _ := s.Audits("foreline")
	if len(audits) != 2 || audits[1].Replaced != ids[0] || audits[1].Calibration != ids[1] {
		t.Errorf("audit = %+v; want two activations, the second replacing %d", audits, ids[0])
	}
}

func TestRetireReturnsToInstrumentCurve(t *testing.T) {
	db := openDB(t, filepath.Join(t.TempDir(), "c.db"))
	defer db.Close()
	s := New(db)
	at := time.Date(2026, 3, 2, 9, 0, 0, 0, time.UTC)
	r, err := s.Add(Record{Gauge: "g", Model: "heat-loss", Calibration: heatLossCal(t, "g"), Created: at})
	if err != nil {
		t.Fatal(err)
	}
	if id, err := s.Retire("g", at, "nothing active"); err != nil || id != 0 {
		t.Fatalf("Retire with nothing active = %d, %v; want 0, nil", id, err)
	}
	if _, _, err := s.Activate(r.ID, at, ""); err != nil {
		t.Fatal(err)
	}
	if id, err := s.Retire("g", at.Add(time.Minute), "sensor replaced"); err != nil || id != r.ID {
		t.Fatalf("Retire = %d, %v; want %d", id, err, r.ID)
	}
	active, _ := s.Active()
	got, _ := s.Get(r.ID)
	if len(active) != 0 || got.State() != "retired" {
		t.Errorf("after Retire: active %v, state %s; want none active, retired", active, got.State())
	}
}

// Concurrent activations of two versions of one gauge leave exactly one
// active, and the audit trail's chain of replacements is unbroken.
func TestConcurrentActivationsStayConsistent(t *testing.T) {
	db := openDB(t, filepath.Join(t.TempDir(), "c.db"))
	defer db.Close()
	s := New(db)
	at := time.Date(2026, 3, 2, 9, 0, 0, 0, time.UTC)
	cal := heatLossCal(t, "g")
	a, _ := s.Add(Record{Gauge: "g", Calibration: cal, Created: at})
	b, _ := s.Add(Record{Gauge: "g", Calibration: cal, Created: at})
	var wg sync.WaitGroup
	for i := range 20 {
		id := a.ID
		if i%2 == 1 {
			id = b.ID
		}
		wg.Go(func() {
			if _, _, err := s.Activate(id, at.Add(time.Duration(i)*time.Second), ""); err != nil {
				t.Error(err)
			}
		})
	}
	wg.Wait()
	active, _ := s.Active()
	ra, _ := s.Get(a.ID)
	rb, _ := s.Get(b.ID)
	nActive := 0
	for _, r := range []Record{ra, rb} {
		if r.State() == "active" {
			nActive++
			if active["g"] != r.ID {
				t.Errorf("record %d says active but the active entry is %d", r.ID, active["g"])
			}
		}
	}
	if nActive != 1 {
		t.Errorf("%d versions active; want exactly 1", nActive)
	}
	audits, _ := s.Audits("g")
	prev := uint32(0)
	for _, e := range audits {
		if e.Replaced != prev {
			t.Errorf("audit %d: replaced %d, but %d was active", e.ID, e.Replaced, prev)
		}
		prev = e.Calibration
	}
}

func TestPointsAreExcludedNotDeleted(t *testing.T) {
	db := openDB(t, filepath.Join(t.TempDir(), "c.db"))
	defer db.Close()
	s := New(db)
	at := time.Date(2026, 3, 2, 9, 0, 0, 0, time.UTC)
	p1, err := s.AddPoint(Point{Gauge: "g", Raw: 2.1, Reference: 0.2, Taken: at, Samples: 60, Window: time.Minute})
	if err != nil {
		t.Fatal(err)
	}
	if _, err := s.AddPoint(Point{Gauge: "h", Raw: 3, Reference: 2, Taken: at}); err != nil {
		t.Fatal(err)
	}
	if _, err := s.Exclude(p1.ID, "", at); err == nil {
		t.Error("Exclude without a reason succeeded; want it refused")
	}
	if _, err := s.Exclude(p1.ID, "valve was still open", at); err != nil {
		t.Fatal(err)
	}
	if _, err := s.Exclude(77, "x", at); !errors.Is(err, ErrNotFound) {
		t.Errorf("Exclude(77) = %v; want ErrNotFound", err)
	}
	pts, err := s.Points("g")
	if err != nil || len(pts) != 1 || pts[0].Excluded != "valve was still open" || pts[0].Raw != 2.1 || pts[0].Window != time.Minute {
		t.Errorf("Points(g) = %+v, %v; want the one point, kept, with its reason", pts, err)
	}
}

func TestAddRuns(t *testing.T) {
	t0 := time.Unix(0, 0)
	var runs []Run
	for i, id := range []uint32{0, 0, 3, 3, 3, 0} {
		runs = AddRuns(runs, t0.Add(time.Duration(i)*time.Second), id)
	}
	want := []Run{{t0, t0.Add(time.Second), 0, 2}, {t0.Add(2 * time.Second), t0.Add(4 * time.Second), 3, 3}, {t0.Add(5 * time.Second), t0.Add(5 * time.Second), 0, 1}}
	if len(runs) != len(want) {
		t.Fatalf("runs %+v; want %+v", runs, want)
	}
	for i := range want {
		if !runs[i].From.Equal(want[i].From) || !runs[i].To.Equal(want[i].To) || runs[i].Calibration != want[i].Calibration || runs[i].Samples != want[i].Samples {
			t.Errorf("run %d = %+v; want %+v", i, runs[i], want[i])
		}
	}
}
