package alerts

import (
	"math"
	"slices"
	"testing"
	"time"
)

// An alarm given to Replace as the *Alarm the engine runs is left whole:
// the on-delay that began before carries on from when it began (crossed
// at 10 s with a 30 s on-delay, so raised at 40 s, by hand), beside an
// alarm added at the same time.
func TestReplaceKeepsAnUnchangedAlarmWhole(t *testing.T) {
	a := limitAlarm(30*time.Second, 0, 0)
	e := started(t, a)
	e.Observe("chamber", pa(5, 0))
	e.Observe("chamber", pa(12, 10)) // crossed; the on-delay runs
	added := &Alarm{Name: "vented", Gauge: "chamber", Severity: "low",
		Rule: &Limit{Gauge: "chamber", Above: 5e4, Below: math.NaN(), Unit: mustUnit("Pa")}}
	if err := e.Replace([]*Alarm{a, added}); err != nil {
		t.Fatal(err)
	}
	if evs := e.Observe("chamber", pa(12, 39)); len(evs) != 0 {
		t.Errorf("events at 39 s: %v, want none (29 s of the on-delay)", kinds(evs))
	}
	if k := kinds(e.Observe("chamber", pa(12, 40))); !slices.Equal(k, []string{"raised:unacknowledged"}) {
		t.Errorf("events at 40 s: %v, want the raise (30 s after the crossing at 10 s)", k)
	}
	if st := e.Status(); len(st) != 2 || st[1].Alarm != "vented" || st[1].State != Normal {
		t.Errorf("status after the replace: %+v", st)
	}
}

// An alarm given to Replace under a new *Alarm (its limit relaxed) keeps
// its state and numbering and is decided again by the next sample: active
// and acknowledged above 10 Pa, it clears at once under a 20 Pa limit
// (no off-delay), as its third transition of its first occurrence.
func TestReplaceChangedAlarmClearsThroughTheNormalPath(t *testing.T) {
	e := started(t, limitAlarm(0, 0, 0))
	e.Observe("chamber", pa(12, 0))                                                        // raised, seq 1
	if _, err := e.Ack(Action{Alarm: "rough-lost", At: t0.Add(time.Second)}); err != nil { // seq 2
		t.Fatal(err)
	}
	relaxed := limitAlarm(0, 0, 0)
	relaxed.Rule.(*Limit).Above = 20
	if err := e.Replace([]*Alarm{relaxed}); err != nil {
		t.Fatal(err)
	}
	if st := e.Status()[0]; st.State != Acknowledged || st.Raised != 1 {
		t.Errorf("state right after the replace: %s, raised %d; want acknowledged, 1 (kept)", st.State, st.Raised)
	}
	evs := e.Observe("chamber", pa(12, 2))
	if len(evs) != 1 || evs[0].Kind != Cleared || evs[0].Seq != 3 || evs[0].Occurrence != 1 || evs[0].State != Normal {
		t.Fatalf("events after the replace: %+v; want one clear, seq 3, occurrence 1, to normal", evs)
	}
	if err := e.Replace([]*Alarm{relaxed, relaxed}); err == nil {
		t.Error("Replace with a name twice succeeded")
	}
}

// A rise watch built again by a reload (its limit changed) or added by it
// is told the isolation the engine was last told, as the running ones were.
func TestReplaceTellsNewRiseWatchesTheIsolation(t *testing.T) {
	watch := func(name string, maxLeak float64) *Alarm {
		return &Alarm{Name: name, Gauge: "chamber", Severity: "high",
			Rule: &RiseWatch{Gauge: "chamber", Window: time.Minute, MaxLeak: maxLeak, Volume: 0.03}}
	}
	e := started(t, watch("leak-watch", 1e-6))
	e.SetIsolated(true)
	changed, added := watch("leak-watch", 1e-5), watch("second-watch", 1e-6)
	if err := e.Replace([]*Alarm{changed, added}); err != nil {
		t.Fatal(err)
	}
	for _, a := range []*Alarm{changed, added} {
		if !a.Rule.(*RiseWatch).isolated {
			t.Errorf("%s after the replace: not isolated; want isolated, as the engine was told", a.Name)
		}
	}
}
