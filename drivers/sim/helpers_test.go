package sim

import (
	"math"
	"testing"
	"time"
)

// epoch is an arbitrary start for tests driven by a manual clock.
var epoch = time.Date(2031, 3, 14, 9, 0, 0, 0, time.UTC)

// manualClock is a clock tests move by hand.
type manualClock struct{ t time.Time }

func (c *manualClock) now() time.Time { return c.t }

// at moves the clock to offset d from epoch.
func (c *manualClock) at(d time.Duration) { c.t = epoch.Add(d) }

func newTestChamber(t testing.TB, cfg Config) (*Chamber, *manualClock) {
	t.Helper()
	clk := &manualClock{t: epoch}
	ch, err := New(cfg, clk.now)
	if err != nil {
		t.Fatalf("New: %v", err)
	}
	return ch, clk
}

// stateAt moves the clock to offset d and returns the chamber's state.
func stateAt(ch *Chamber, clk *manualClock, d time.Duration) State {
	clk.at(d)
	return ch.State()
}

func relErr(got, want float64) float64 {
	if want == 0 {
		return math.Abs(got)
	}
	return math.Abs(got-want) / math.Abs(want)
}

// seconds converts float seconds to a Duration, to the nanosecond.
func seconds(s float64) time.Duration { return time.Duration(math.Round(s * 1e9)) }
