package daemon

import (
	"context"
	"log/slog"
	"path/filepath"
	"sync/atomic"
	"testing"
	"testing/synctest"
	"time"

	"holdfast/alerts"
	"holdfast/calib"
	"holdfast/daemon/config"
	"holdfast/daemon/store"
	"holdfast/drivers"
)

// fakeDriver answers after a fixed delay and records when it was asked.
type fakeDriver struct {
	delay    time.Duration
	inFlight *atomic.Int32
	overlap  *atomic.Bool
	calls    []time.Time
}

func (f *fakeDriver) Read(ctx context.Context) (drivers.Reading, error) {
	if f.inFlight.Add(1) > 1 {
		f.overlap.Store(true)
	}
	defer f.inFlight.Add(-1)
	f.calls = append(f.calls, time.Now())
	select {
	case <-time.After(f.delay):
		return drivers.Reading{Raw: 100, Status: drivers.StatusOK, At: time.Now()}, nil
	case <-ctx.Done():
		return drivers.Reading{}, &drivers.GaugeError{Gauge: "fake", Op: "read", Err: drivers.ErrNoReply}
	}
}

func testDaemon(t *testing.T, gauges ...*gauge) *Daemon {
	t.Helper()
	db, err := store.Open(filepath.Join(t.TempDir(), "t.db"), store.Options{})
	if err != nil {
		t.Fatal(err)
	}
	t.Cleanup(func() { db.Close() })
	d := &Daemon{log: slog.New(slog.DiscardHandler), clock: wallClock{}, emit: func(Event) {},
		store: db, gauges: gauges, alarms: alerts.NewEngine(nil)}
	d.cfgp.Store(&config.Config{})
	d.met = newMetrics(d)
	return d
}

func fakeGauge(name string, interval time.Duration, drv drivers.Driver) *gauge {
	return &gauge{name: name, drv: drv, transfer: calib.Identity{}, dim: calib.Pressure,
		cfg: &config.GaugeConfig{Interval: config.Duration(interval), Timeout: config.Duration(interval), Kind: "pressure"}}
}

// Polls on one link never overlap, and each gauge keeps its own interval.
func TestPollLinkSchedule(t *testing.T) {
	synctest.Test(t, func(t *testing.T) {
		var inFlight atomic.Int32
		var overlap atomic.Bool
		fast := &fakeDriver{delay: 100 * time.Millisecond, inFlight: &inFlight, overlap: &overlap}
		slow := &fakeDriver{delay: 100 * time.Millisecond, inFlight: &inFlight, overlap: &overlap}
		gf, gs := fakeGauge("fast", time.Second, fast), fakeGauge("slow", 3*time.Second, slow)
		d := testDaemon(t, gf, gs)
		ctx, cancel := context.WithTimeout(context.Background(), 30*time.Second-time.Millisecond)
		defer cancel()
		d.pollLink(ctx, nil, &link{name: "bus", gauges: []*gauge{gf, gs}})
		if overlap.Load() {
			t.Error("two polls on one link overlapped")
		}
		if got := len(fast.calls); got != 30 {
			t.Errorf("fast gauge polled %d times in 30 s at 1 s, want 30", got)
		}
		if got := len(slow.calls); got != 10 {
			t.Errorf("slow gauge polled %d times in 30 s at 3 s, want 10", got)
		}
		for i := 1; i < len(slow.calls); i++ {
			if gap := slow.calls[i].Sub(slow.calls[i-1]); gap != 3*time.Second {
				t.Errorf("slow poll %d came %s after the previous, want 3s", i, gap)
			}
		}
	})
}

// A reading that takes longer than the interval skips the missed slots
// instead of polling back to back to catch up.
func TestPollLinkSkipsWhenBehind(t *testing.T) {
	synctest.Test(t, func(t *testing.T) {
		var inFlight atomic.Int32
		var overlap atomic.Bool
		drv := &fakeDriver{delay: 2500 * time.Millisecond, inFlight: &inFlight, overlap: &overlap}
		g := fakeGauge("laggy", time.Second, drv)
		g.cfg.Timeout = config.Duration(5 * time.Second)
		d := testDaemon(t, g)
		ctx, cancel := context.WithTimeout(context.Background(), 10*time.Second-time.Millisecond)
		defer cancel()
		d.pollLink(ctx, nil, &link{name: "bus", gauges: []*gauge{g}})
		// Polls start at 0, 3, 6, 9 s (each takes 2.5 s; the next free 1 s slot follows).
		if got := len(drv.calls); got != 4 {
			t.Errorf("polled %d times in 10 s, want 4", got)
		}
		for i := 1; i < len(drv.calls); i++ {
			if gap := drv.calls[i].Sub(drv.calls[i-1]); gap != 3*time.Second {
				t.Errorf("poll %d came %s after the previous, want 3s (next slot on the 1 s grid)", i, gap)
			}
		}
	})
}

// A gauge that stops answering reads as down after downAfter misses, and
// exports no pressure.
func TestGaugeDownAfterMisses(t *testing.T) {
	synctest.Test(t, func(t *testing.T) {
		var inFlight atomic.Int32
		var overlap atomic.Bool
		drv := &fakeDriver{delay: time.Hour, inFlight: &inFlight, overlap: &overlap}
		g := fakeGauge("mute", time.Second, drv)
		g.cfg.Timeout = config.Duration(200 * time.Millisecond)
		g.seen, g.up = true, true
		g.last = calib.Sample{At: time.Now(), Value: 5, Quality: calib.QualityOK}
		d := testDaemon(t, g)
		var downs []Event
		d.emit = func(e Event) {
			if e.Kind == "gauge-down" {
				downs = append(downs, e)
			}
		}
		ctx, cancel := context.WithTimeout(context.Background(), 5*time.Second)
		defer cancel()
		d.pollLink(ctx, nil, &link{name: "bus", gauges: []*gauge{g}})
		if len(downs) != 1 {
			t.Fatalf("got %d gauge-down events, want 1", len(downs))
		}
		if v := g.view(time.Now()); v.up {
			t.Error("gauge still up after 5 unanswered polls")
		}
	})
}

// Retention deletes whole chunks older than the limit and keeps the rest.
func TestRetentionDeletesOldSamples(t *testing.T) {
	g := fakeGauge("p", time.Second, nil)
	d := testDaemon(t, g)
	old := time.Date(2026, 1, 1, 0, 0, 0, 0, time.UTC)
	for i := range 3000 {
		d.store.Append("p", store.Point{At: old.Add(time.Duration(i) * time.Minute), Raw: 1, Value: 1})
	}
	if err := d.store.Flush(); err != nil {
		t.Fatal(err)
	}
	d.applyRetention(old.Add(40 * time.Hour))
	n, err := d.store.Count("p")
	if err != nil {
		t.Fatal(err)
	}
	// 3000 minutes of samples; those wholly before 40 h go, a straddling chunk stays.
	if n >= 3000 || n < 3000-40*60 {
		t.Errorf("%d samples left of 3000 after deleting those before 40 h; want between %d and 2999", n, 3000-40*60)
	}
}

// Roll-up retention deletes a tier's old roll-ups and leaves the samples
// and the other tier alone.
func TestRollupRetentionDeletesOldRollups(t *testing.T) {
	g := fakeGauge("p", time.Second, nil)
	d := testDaemon(t, g)
	old := time.Date(2026, 1, 1, 0, 0, 0, 0, time.UTC)
	for i := range 3 * 60 { // three hours, one sample a minute
		d.store.Append("p", store.Point{At: old.Add(time.Duration(i) * time.Minute), Raw: 1, Value: 1})
	}
	if err := d.store.Flush(); err != nil {
		t.Fatal(err)
	}
	d.applyRollupRetention(store.TierMinute, old.Add(2*time.Hour)) // the first two hours of minutes go
	mins, _ := d.store.Rollups("p", store.TierMinute, old, old.Add(24*time.Hour))
	hours, _ := d.store.Rollups("p", store.TierHour, old, old.Add(24*time.Hour))
	n, _ := d.store.Count("p")
	if len(mins) != 60 || len(hours) != 3 || n != 180 {
		t.Errorf("%d minute roll-ups, %d hour roll-ups, %d samples left; want 60, 3 and 180", len(mins), len(hours), n)
	}
}
