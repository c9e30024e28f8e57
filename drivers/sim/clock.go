package sim

import (
	"context"
	"math"
	"time"
)

// A Clock is simulated time running Speed simulated seconds per wall second
// from a given start. Elapsed wall time is measured on the monotonic clock,
// so a step of the wall clock neither stalls nor jumps it. Under
// testing/synctest it runs on the bubble's fake clock. A Clock is safe for
// concurrent use.
type Clock struct {
	start     time.Time // simulated time at wallStart
	wallStart time.Time // carries a monotonic reading
	speed     float64
}

// NewClock returns a clock that reads start now and then runs speed times
// faster than the wall clock. A speed that is not a finite value > 0 is
// taken as 1.
func NewClock(start time.Time, speed float64) *Clock {
	if !(speed > 0) || math.IsInf(speed, 1) {
		speed = 1
	}
	return &Clock{start: start, wallStart: time.Now(), speed: speed}
}

// Speed returns the simulated seconds per wall second.
func (c *Clock) Speed() float64 { return c.speed }

// Now returns the simulated time.
func (c *Clock) Now() time.Time {
	return c.start.Add(time.Duration(float64(time.Since(c.wallStart)) * c.speed))
}

// wall converts a simulated duration to the wall duration it takes, rounded
// up so that a timer never fires before d of simulated time has passed.
func (c *Clock) wall(d time.Duration) time.Duration {
	if d <= 0 {
		return 0
	}
	return time.Duration(math.Ceil(float64(d) / c.speed))
}

// After returns a channel that receives the simulated time once d of
// simulated time has passed (d/Speed of wall time). Like time.After, the
// timer cannot be stopped; prefer Sleep where the wait may be abandoned.
func (c *Clock) After(d time.Duration) <-chan time.Time {
	ch := make(chan time.Time, 1) // buffered: the send never blocks
	time.AfterFunc(c.wall(d), func() { ch <- c.Now() })
	return ch
}

// Sleep waits for d of simulated time, or until ctx is done, when it
// returns ctx.Err().
func (c *Clock) Sleep(ctx context.Context, d time.Duration) error {
	t := time.NewTimer(c.wall(d))
	defer t.Stop()
	select {
	case <-ctx.Done():
		return ctx.Err()
	case <-t.C:
		return nil
	}
}
