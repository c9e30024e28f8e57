package sim

import (
	"context"
	"errors"
	"testing"
	"testing/synctest"
	"time"
)

// The clock runs Speed simulated seconds per wall second, and its timers
// fire after d/Speed of wall time.
func TestClockRunsFast(t *testing.T) {
	synctest.Test(t, func(t *testing.T) {
		c := NewClock(epoch, 600)
		wall := time.Now()
		got := <-c.After(10 * time.Minute)
		if w := time.Since(wall); w != time.Second {
			t.Errorf("After(10m) at speed 600 fired after %s of wall time, want 1s", w)
		}
		if want := epoch.Add(10 * time.Minute); !got.Equal(want) || !c.Now().Equal(want) {
			t.Errorf("After delivered %s, Now %s; want %s", got, c.Now(), want)
		}
		if err := c.Sleep(context.Background(), time.Minute); err != nil {
			t.Fatal(err)
		}
		if want := epoch.Add(11 * time.Minute); !c.Now().Equal(want) {
			t.Errorf("after Sleep(1m): %s, want %s", c.Now(), want)
		}
		ctx, cancel := context.WithCancel(context.Background())
		time.AfterFunc(10*time.Millisecond, cancel)
		wall = time.Now()
		if err := c.Sleep(ctx, time.Hour); !errors.Is(err, context.Canceled) || time.Since(wall) != 10*time.Millisecond {
			t.Errorf("cancelled Sleep: %v after %s, want context.Canceled after 10ms", err, time.Since(wall))
		}
		if s := NewClock(epoch, 0).Speed(); s != 1 {
			t.Errorf("speed 0 taken as %g, want 1", s)
		}
	})
}

// A chamber on a fast clock is where a chamber on a manual clock is after the
// same simulated time.
func TestChamberOnClock(t *testing.T) {
	synctest.Test(t, func(t *testing.T) {
		c := NewClock(epoch, 600)
		ch, err := New(Demo(), c.Now)
		if err != nil {
			t.Fatal(err)
		}
		<-time.After(25 * time.Second)
		st := ch.State()
		if st.Elapsed != 15000*time.Second {
			t.Fatalf("after 25 s of wall time at speed 600: elapsed %s, want 4h10m", st.Elapsed)
		}
		ref, clk := newTestChamber(t, Demo())
		if want := stateAt(ref, clk, st.Elapsed); relErr(st.Pressure, want.Pressure) > 1e-5 {
			t.Errorf("p = %g Pa on the fast clock, %g Pa on the manual one", st.Pressure, want.Pressure)
		}
	})
}
