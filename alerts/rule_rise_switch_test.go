package alerts

import (
	"math"
	"testing"
	"time"

	"holdfast/calib"
)

func state(v float64, sec float64) calib.Sample {
	return calib.Sample{At: at(sec), Value: v, Quality: calib.QualityOK}
}

// worked feeds the rate-of-rise worked check of REFERENCES.md §3b (V =
// 100 L, 1.0e-2 → 5.0e-2 mbar in 600 s, Q = 6.6667e-4 Pa·m³/s) from second
// from on, one sample a second, and returns the raises.
func worked(e *Engine, from float64) []Event {
	var raised []Event
	for s := 0.0; s <= 600; s++ {
		for _, ev := range e.Observe("chamber", ok(1.0+4.0*s/600, from+s)) {
			if ev.Kind == Raised {
				raised = append(raised, ev)
			}
		}
	}
	return raised
}

func switchedWatch() (*Engine, *RiseWatch) {
	rw := &RiseWatch{Gauge: "chamber", Window: 10 * time.Minute, Every: 30 * time.Second, MaxLeak: 1e-4,
		Volume: 0.100, IsolatedBy: "valve-closed", Unit: mustUnit("mbar*L/s")}
	e := NewEngine([]*Alarm{{Name: "leaking", Gauge: "chamber", Rule: rw}})
	if _, err := e.Attach(nil); err != nil {
		panic(err)
	}
	return e, rw
}

// A rise watch isolated by a valve-closed switch analyses only while the
// switch reads 1: the worked check's rise raises the alarm with its leak
// rate while the valve is closed and not while it is open; the API's
// SetIsolated does not override the switch.
func TestRiseWatchFollowsTheSwitch(t *testing.T) {
	e, _ := switchedWatch()
	if got := worked(e, 0); len(got) != 0 {
		t.Fatalf("raised %d times before the switch said anything; isolation unknown must decide nothing", len(got))
	}
	e.Observe("valve-closed", state(0, 700))
	e.SetIsolated(true) // the API: ignored, the switch says open
	if got := worked(e, 701); len(got) != 0 {
		t.Fatalf("raised %d times with the valve open", len(got))
	}
	e.Observe("valve-closed", state(1, 1400))
	got := worked(e, 1401)
	if len(got) != 1 {
		t.Fatalf("raised %d times with the valve closed, want once", len(got))
	}
	if q := got[0].Value; math.Abs(q/6.6667e-4-1) > 1e-4 {
		t.Errorf("leak rate %g Pa·m³/s, want 6.6667e-4 (REFERENCES.md §3b)", q)
	}
	e.SetIsolated(false) // ignored again
	if st := e.Status()[0]; !st.Active {
		t.Fatalf("SetIsolated(false) cleared a switch-driven rise watch: %+v", st)
	}
	evs := e.Observe("valve-closed", state(0, 2100))
	if len(evs) != 1 || evs[0].Kind != Cleared {
		t.Errorf("valve opened: %v, want the alarm cleared", kinds(evs))
	}
}

// The window starts afresh each time the valve closes, so a rise is never
// judged across a pumped stretch: after reopening and closing again, the
// rule waits for a new full window before it decides anything.
func TestRiseWatchWindowResetsWithTheSwitch(t *testing.T) {
	e, rw := switchedWatch()
	e.Observe("valve-closed", state(1, 0))
	worked(e, 1)
	first := rw.Last
	if first.Classification != LeakDominated {
		t.Fatalf("first closed stretch: %s, want leak-dominated", first.Classification)
	}
	e.Observe("valve-closed", state(0, 700))
	e.Observe("valve-closed", state(1, 710))
	for s := 0.0; s <= 300; s++ { // half a window: not enough
		if c := rw.Observe("chamber", ok(1, 711+s), true); c.Known {
			t.Fatalf("decided after %g s of a new window: %+v", s, c)
		}
	}
}

// A switch that gives no valid reading leaves the isolation unknown: the
// alarm keeps its state (neither raised nor cleared by a dead input), and
// the window is emptied.
func TestRiseWatchSwitchFault(t *testing.T) {
	e, rw := switchedWatch()
	e.Observe("valve-closed", state(1, 0))
	if len(worked(e, 1)) != 1 {
		t.Fatal("not raised on the worked rise")
	}
	bad := calib.Sample{At: at(700), Value: math.NaN(), Quality: calib.QualitySensorFault}
	if evs := e.Observe("valve-closed", bad); len(evs) != 0 {
		t.Errorf("a faulty switch reading changed the alarm: %v", kinds(evs))
	}
	if evs := e.Observe("valve-closed", state(0.5, 701)); len(evs) != 0 {
		t.Errorf("a switch reading neither 0 nor 1 changed the alarm: %v", kinds(evs))
	}
	if c := rw.Observe("chamber", ok(5, 702), true); c.Known {
		t.Errorf("pressure judged while the isolation is unknown: %+v", c)
	}
	if !e.Status()[0].Active {
		t.Error("the alarm cleared while the isolation was unknown")
	}
}

// Only one hold test holds the claim at a time.
func TestHoldTestClaim(t *testing.T) {
	e := NewEngine(nil)
	if _, ok := e.ClaimHoldTest("ht-1"); !ok {
		t.Fatal("first claim refused")
	}
	if _, ok := e.ClaimHoldTest("ht-1"); !ok {
		t.Error("the running test's own claim refused")
	}
	if running, ok := e.ClaimHoldTest("ht-2"); ok || running != "ht-1" {
		t.Errorf("second test: %q %v, want refused naming ht-1", running, ok)
	}
	e.ReleaseHoldTest("ht-2") // not the holder: no effect
	if e.RunningHoldTest() != "ht-1" {
		t.Error("a release by another test freed the claim")
	}
	e.ReleaseHoldTest("ht-1")
	if _, ok := e.ClaimHoldTest("ht-2"); !ok {
		t.Error("claim refused after the release")
	}
}
