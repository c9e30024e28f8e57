package daemon

import (
	"context"
	"log/slog"
	"testing"
	"time"

	"github.com/prometheus/client_golang/prometheus/testutil"

	"holdfast/daemon/store"
	"holdfast/drivers"
)

// A reading within the store's resolution (1 ms) of the gauge's last sample
// is not kept: a poll right after a stalled one can read in the same
// millisecond, and a series must hold one sample per stored time (the crash
// trial under -race found two readings of one gauge at one time). A reading
// in the next millisecond is kept, and so is the first.
func TestReadingAtAStoredTimeAlreadyTaken(t *testing.T) {
	g := fakeGauge("pirani", 20*time.Millisecond, nil)
	d := testDaemon(t, g)
	log := slog.New(slog.DiscardHandler)
	t0 := time.Date(2031, 3, 14, 22, 0, 0, 0, time.UTC).Add(43 * time.Millisecond)
	for _, at := range []time.Time{
		t0,                              // kept: the first
		t0.Add(400 * time.Microsecond),  // same millisecond: not kept
		t0.Add(999 * time.Microsecond),  // same millisecond: not kept
		t0.Add(1000 * time.Microsecond), // the next: kept
	} {
		d.handle(context.Background(), log, g, drivers.Reading{Raw: 50, Status: drivers.StatusOK, At: at}, nil)
	}
	if err := d.store.Flush(); err != nil {
		t.Fatal(err)
	}
	var got []time.Time
	d.store.Range("pirani", t0.Add(-time.Second), t0.Add(time.Second), func(p store.Point) bool {
		got = append(got, p.At)
		return true
	})
	if n := testutil.ToFloat64(d.met.skipped.WithLabelValues("pirani")); n != 2 {
		t.Errorf("holdfast_polls_skipped_total = %g, want the 2 readings not kept", n)
	}
	if len(got) != 2 || !got[0].Equal(t0) || !got[1].Equal(t0.Add(time.Millisecond)) {
		t.Errorf("stored %v; want %s and %s", got, t0.Format(time.RFC3339Nano), t0.Add(time.Millisecond).Format(time.RFC3339Nano))
	}
}
