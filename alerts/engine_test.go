package alerts

import (
	"errors"
	"math"
	"slices"
	"strings"
	"testing"
	"time"

	"holdfast/calib"
)

var t0 = time.Date(2026, 3, 1, 22, 0, 0, 0, time.UTC)

func pa(v float64, sec int) calib.Sample {
	return calib.Sample{At: t0.Add(time.Duration(sec) * time.Second), Value: v, Quality: calib.QualityOK}
}

func limitAlarm(on, off time.Duration, deadband float64) *Alarm {
	return &Alarm{Name: "rough-lost", Gauge: "chamber", Severity: "high", OnDelay: on, OffDelay: off,
		Rule: &Limit{Gauge: "chamber", Above: 10, Below: math.NaN(), Deadband: deadband, Unit: mustUnit("Pa")}}
}

func mustUnit(name string) calib.Unit {
	u, err := calib.LookupUnit(name)
	if err != nil {
		panic(err)
	}
	return u
}

func started(t *testing.T, alarms ...*Alarm) *Engine {
	t.Helper()
	e := NewEngine(alarms)
	if _, err := e.Attach(nil); err != nil {
		t.Fatal(err)
	}
	return e
}

func kinds(evs []Event) []string {
	var out []string
	for _, ev := range evs {
		out = append(out, string(ev.Kind)+":"+string(ev.State))
	}
	return out
}

// The alarm state transitions of IEC 62682 / ISA-18.2 (the alarm state
// diagram: normal → unacknowledged → acknowledged → normal, and
// unacknowledged → returned-unacknowledged → normal on acknowledgement),
// with an on-delay and an off-delay. Expected sequences from that diagram
// (from memory of ANSI/ISA-18.2-2016 §11.5; the standard's text was not at hand).
func TestStateMachineFollowsTheAlarmStateDiagram(t *testing.T) {
	e := started(t, limitAlarm(30*time.Second, 10*time.Second, 0))
	var got []Event
	feed := func(v float64, sec int) { got = append(got, e.Observe("chamber", pa(v, sec))...) }
	feed(5, 0)
	feed(12, 10) // crossed; on-delay runs
	feed(12, 39) // 29 s: not yet
	if st := e.Status()[0].State; st != Normal {
		t.Fatalf("state before the on-delay ran out: %s, want normal", st)
	}
	feed(12, 40) // 30 s: raised
	ack, err := e.Ack(Action{Alarm: "rough-lost", By: "night-shift", At: t0.Add(50 * time.Second)})
	if err != nil {
		t.Fatal(err)
	}
	got = append(got, ack)
	feed(5, 60)
	feed(5, 69) // off-delay 10 s not over
	feed(5, 70) // cleared → normal (it was acknowledged)
	feed(12, 100)
	feed(12, 130) // second occurrence
	feed(5, 140)
	feed(5, 150) // returns before anyone acknowledged
	want := []string{"limit-crossed:normal", "raised:unacknowledged", "acknowledged:acknowledged", "cleared:normal",
		"limit-crossed:normal", "raised:unacknowledged", "cleared:returned-unacknowledged"}
	if k := kinds(got); !slices.Equal(k, want) {
		t.Fatalf("events %v\nwant %v", k, want)
	}
	ev, err := e.Ack(Action{Alarm: "rough-lost", At: t0.Add(200 * time.Second)})
	if err != nil || ev.State != Normal {
		t.Fatalf("ack of a returned alarm: %v, %v; want normal", ev.State, err)
	}
	if _, err := e.Ack(Action{Alarm: "rough-lost", At: t0.Add(201 * time.Second)}); !errors.Is(err, ErrNoChange) {
		t.Errorf("second ack: %v, want ErrNoChange", err)
	}
	if _, err := e.Ack(Action{Alarm: "nope"}); !errors.Is(err, ErrUnknownAlarm) {
		t.Errorf("ack of an unknown alarm: %v", err)
	}
	keys := map[string]bool{}
	for _, ev := range append(got, ev) {
		if ev.Transition() && keys[ev.DedupeKey] {
			t.Errorf("dedupe key %s used twice", ev.DedupeKey)
		}
		keys[ev.DedupeKey] = true
	}
	raise := got[1]
	if raise.Occurrence != 1 || got[5].Occurrence != 2 || raise.DedupeKey != "rough-lost/1/unacknowledged" {
		t.Errorf("first raise: occurrence %d key %q; second occurrence %d", raise.Occurrence, raise.DedupeKey, got[5].Occurrence)
	}
	if want := "chamber above the 10 Pa limit (reads 12 Pa) for 30s"; raise.Message != want {
		t.Errorf("message %q, want %q", raise.Message, want)
	}
	if s := e.Status()[0]; s.Raised != 2 || s.State != Normal {
		t.Errorf("status: raised %d state %s; want 2, normal", s.Raised, s.State)
	}
}

// A value wandering ±0.2 Pa around a 10 Pa limit: without a deadband the
// alarm is raised again and again and is reported as chattering (3 raises
// in 1 minute, a starting criterion of alarm-management practice); with a
// 0.5 Pa deadband (ISA-18.2 recommends a deadband on analogue alarms;
// common practice) it is raised once and stays in alarm.
func TestDeadbandStopsChattering(t *testing.T) {
	for _, c := range []struct {
		deadband  float64
		raised    int
		chattered bool
	}{{0, 10, true}, {0.5, 1, false}} {
		e := started(t, limitAlarm(0, 0, c.deadband))
		var evs []Event
		for i := range 20 {
			v := 10.2
			if i%2 == 1 {
				v = 9.8
			}
			evs = append(evs, e.Observe("chamber", pa(v, 2*i))...)
		}
		s := e.Status()[0]
		chattered := slices.ContainsFunc(evs, func(ev Event) bool { return ev.Kind == Chattering })
		if s.Raised != c.raised || chattered != c.chattered || s.Chattering != c.chattered {
			t.Errorf("deadband %g: raised %d, chattering event %v flag %v; want %d, %v",
				c.deadband, s.Raised, chattered, s.Chattering, c.raised, c.chattered)
		}
	}
}

// Shelving hides an alarm until its expiry; Tick ends it, and an alarm
// still in alarm is annunciated again as unacknowledged.
func TestShelveExpires(t *testing.T) {
	e := started(t, limitAlarm(0, 0, 0))
	e.Observe("chamber", pa(12, 0))
	sh, err := e.Shelve(Action{Alarm: "rough-lost", Reason: "pump swap", Until: t0.Add(time.Hour), At: t0.Add(time.Second)})
	if err != nil || sh.State != Shelved || !strings.Contains(sh.Message, "pump swap") {
		t.Fatalf("shelve: %+v %v", sh, err)
	}
	if evs := e.Observe("chamber", pa(5, 10)); len(evs) != 1 || evs[0].Kind != Cleared || evs[0].State != Shelved {
		t.Errorf("clear while shelved: %v, want one cleared:shelved", kinds(evs))
	}
	if evs := e.Observe("chamber", pa(12, 20)); len(evs) != 1 || evs[0].State != Shelved {
		t.Errorf("raise while shelved: %v, want a raise kept shelved", kinds(evs))
	}
	if evs := e.Tick(t0.Add(59 * time.Minute)); len(evs) != 0 {
		t.Errorf("tick before the expiry: %v", kinds(evs))
	}
	evs := e.Tick(t0.Add(time.Hour))
	if len(evs) != 1 || evs[0].Kind != Unshelved || evs[0].State != Unacknowledged {
		t.Fatalf("at the expiry: %v, want unshelved:unacknowledged", kinds(evs))
	}
	if _, err := e.Shelve(Action{Alarm: "rough-lost", Until: t0, At: t0.Add(2 * time.Hour)}); err == nil {
		t.Error("shelving until a past time succeeded")
	}
}

// Out of service and suppressed alarms track their condition but ask no
// one to acknowledge; returning them to service while the condition holds
// annunciates them.
func TestOutOfServiceAndSuppressed(t *testing.T) {
	e := started(t, limitAlarm(0, 0, 0))
	if _, err := e.SetService(Action{Alarm: "rough-lost", Reason: "gauge replaced", At: t0}, true); err != nil {
		t.Fatal(err)
	}
	e.Observe("chamber", pa(12, 5))
	if s := e.Status()[0]; s.State != OutOfService || !s.Active || !s.Acked {
		t.Errorf("out of service: %+v", s)
	}
	ev, err := e.SetService(Action{Alarm: "rough-lost", At: t0.Add(time.Minute)}, false)
	if err != nil || ev.State != Unacknowledged {
		t.Errorf("back in service while active: %v %v, want unacknowledged", ev.State, err)
	}
	if _, err := e.Suppress(Action{Alarm: "rough-lost", Reason: "vented on purpose", At: t0.Add(2 * time.Minute)}, true); err != nil {
		t.Fatal(err)
	}
	if s := e.Status()[0]; s.State != Suppressed || s.Reason != "vented on purpose" {
		t.Errorf("suppressed: %+v", s)
	}
	if _, err := e.Suppress(Action{Alarm: "rough-lost", At: t0.Add(3 * time.Minute)}, true); !errors.Is(err, ErrNoChange) {
		t.Errorf("suppress twice: %v", err)
	}
}

// An engine that has not restored its state decides nothing, so a restart
// cannot re-report a transition before the stored state is known.
func TestEngineWaitsForAttach(t *testing.T) {
	e := NewEngine([]*Alarm{limitAlarm(0, 0, 0)})
	if evs := e.Observe("chamber", pa(12, 0)); evs != nil {
		t.Errorf("before Attach: %v", kinds(evs))
	}
	if _, err := e.Ack(Action{Alarm: "rough-lost"}); err == nil {
		t.Error("ack before Attach succeeded")
	}
}

// A condition already true at the first sample (the chamber at atmosphere
// when watching starts) runs the on-delay but is no limit-crossed news; a
// later crossing is, and the alarm still raises when the delay runs out.
func TestNoCrossingNewsForTheFirstSample(t *testing.T) {
	e := started(t, limitAlarm(time.Minute, 0, 0))
	if evs := e.Observe("chamber", pa(12, 0)); len(evs) != 0 {
		t.Errorf("first sample above the limit: events %q, want none", kinds(evs))
	}
	if evs := e.Observe("chamber", pa(12, 61)); !slices.ContainsFunc(evs, func(ev Event) bool { return ev.Kind == Raised }) {
		t.Errorf("still above after the 1 min on-delay: events %q, want a raise", kinds(evs))
	}
	e = started(t, limitAlarm(time.Minute, 0, 0))
	e.Observe("chamber", pa(5, 0))
	if evs := e.Observe("chamber", pa(12, 10)); len(evs) != 1 || evs[0].Kind != LimitCrossed {
		t.Errorf("a crossing after a normal sample: events %q, want one limit-crossed", kinds(evs))
	}
}
