package daemon

import (
	"context"
	"errors"
	"testing"
	"testing/synctest"
	"time"

	"holdfast/drivers/sim"
)

// On the demo's fast clock a 2 s read timeout is 3.3 ms of wall time at
// speed 600: a loaded machine leaves a goroutine unscheduled for longer, and
// a healthy simulated gauge read as "not answering". The timeout must last
// its simulated length and at least min(timeout, simTimeoutFloor) of wall
// time.
func TestSimTimeoutHasAWallFloor(t *testing.T) {
	synctest.Test(t, func(t *testing.T) {
		d := &Daemon{clock: sim.NewClock(time.Date(2026, 3, 2, 8, 0, 0, 0, time.UTC), 600)}
		ctx, cancel := d.withTimeout(context.Background(), 2*time.Second)
		defer cancel()
		time.Sleep(50 * time.Millisecond) // 30 s simulated: the simulated timeout is long past
		if err := ctx.Err(); err != nil {
			t.Fatalf("after 50 ms of wall time (30 s simulated) the 2 s timeout expired (%v); want it to last %s of wall time", err, simTimeoutFloor)
		}
		time.Sleep(simTimeoutFloor)
		if !errors.Is(context.Cause(ctx), context.DeadlineExceeded) {
			t.Fatalf("after %s of wall time: cause %v, want the deadline", simTimeoutFloor+50*time.Millisecond, context.Cause(ctx))
		}
	})
	// A timeout shorter than the floor lasts its own length in wall time,
	// never longer than it would on the wall clock.
	synctest.Test(t, func(t *testing.T) {
		d := &Daemon{clock: sim.NewClock(time.Now(), 600)}
		ctx, cancel := d.withTimeout(context.Background(), 100*time.Millisecond)
		defer cancel()
		time.Sleep(99 * time.Millisecond)
		if ctx.Err() != nil {
			t.Fatal("a 100 ms timeout expired before 100 ms of wall time")
		}
		time.Sleep(2 * time.Millisecond)
		if ctx.Err() == nil {
			t.Fatal("a 100 ms timeout still running after 101 ms of wall time")
		}
	})
}
