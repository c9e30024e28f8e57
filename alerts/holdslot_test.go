package alerts

import (
	"math"
	"slices"
	"testing"
	"time"
)

// A hold test on gauge "cdg" provokes every rise watch and the upper limit
// on cdg; a lower limit, another gauge's upper limit and an alarm an
// operator already suppressed are not its to suppress. Suppressing by
// design and lifting it afterwards are both transitions in the history.
func TestHoldTestProvokedAndSuppressed(t *testing.T) {
	nan := math.NaN()
	e := NewEngine([]*Alarm{
		{Name: "not-holding", Gauge: "cdg", Rule: &Limit{Gauge: "cdg", Above: 0.3, Below: nan}},
		{Name: "too-low", Gauge: "cdg", Rule: &Limit{Gauge: "cdg", Above: nan, Below: 1e-6}},
		{Name: "ion-high", Gauge: "ion", Rule: &Limit{Gauge: "ion", Above: 1e-3, Below: nan}},
		{Name: "leaking", Gauge: "cdg", Rule: &RiseWatch{Gauge: "cdg", Window: time.Minute, Volume: 0.03}},
		{Name: "held", Gauge: "cdg", Rule: &RiseWatch{Gauge: "cdg", Window: time.Minute, Volume: 0.03}},
	})
	if _, err := e.Attach(nil); err != nil {
		t.Fatal(err)
	}
	at := time.Date(2031, 1, 1, 0, 0, 0, 0, time.UTC)
	if _, err := e.Suppress(Action{Alarm: "held", At: at, Reason: "operator"}, true); err != nil {
		t.Fatal(err)
	}
	got := e.HoldTestProvoked("cdg")
	if want := []string{"not-holding", "leaking"}; !slices.Equal(got, want) {
		t.Fatalf("provoked %v, want %v", got, want)
	}
	for _, on := range []bool{true, false} {
		ev, err := e.Suppress(Action{Alarm: "not-holding", By: "hold test 000001", At: at}, on)
		if err != nil || !ev.Transition() {
			t.Errorf("suppress %v: %+v, %v; want a stored transition", on, ev, err)
		}
	}
}
