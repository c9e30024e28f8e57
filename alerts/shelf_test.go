package alerts

import (
	"errors"
	"strings"
	"testing"
	"time"
)

// savedStore hands Attach a stored state, as after a restart.
type savedStore struct{ saved []Saved }

func (s *savedStore) Load() ([]Saved, error)        { return s.saved, nil }
func (s *savedStore) Save([]Saved, []Event) error   { return nil }
func (s *savedStore) Delivered([]string) error      { return nil }
func (s *savedStore) Undelivered() ([]Event, error) { return nil, nil }

// A shelf always ends (IEC 62682 / ISA-18.2 treat shelving as temporary,
// with a time limit: from memory, the standard's text was not at hand).
// Without an end the default applies; no shelf may pass the maximum; a
// critical alarm must be given its end.
func TestShelfAlwaysEnds(t *testing.T) {
	e := started(t, limitAlarm(0, 0, 0))
	e.SetShelfLimits(ShelfLimits{Default: 8 * time.Hour, Max: 24 * time.Hour})
	e.Observe("chamber", pa(12, 0))
	sh, err := e.Shelve(Action{Alarm: "rough-lost", Reason: "x", At: t0})
	if err != nil || !sh.Until.Equal(t0.Add(8*time.Hour)) || !strings.Contains(sh.Message, "until") {
		t.Fatalf("shelve without an end: until %s (%q), %v; want the 8 h default", sh.Until, sh.Message, err)
	}
	if evs := e.Tick(t0.Add(8 * time.Hour)); len(evs) != 1 || evs[0].Kind != Unshelved {
		t.Errorf("after the 8 h default: %v, want unshelved", kinds(evs))
	}
	if _, err := e.Shelve(Action{Alarm: "rough-lost", Until: t0.Add(48 * time.Hour), At: t0.Add(9 * time.Hour)}); !errors.Is(err, ErrShelfLimit) {
		t.Errorf("shelving for 39 h with a 24 h maximum: %v, want ErrShelfLimit", err)
	}

	crit := limitAlarm(0, 0, 0)
	crit.Name, crit.Severity = "wall-too-hot", SeverityCritical
	e = started(t, crit)
	if _, err := e.Shelve(Action{Alarm: "wall-too-hot", Reason: "x", At: t0}); !errors.Is(err, ErrShelfLimit) || !strings.Contains(err.Error(), "critical") {
		t.Errorf("shelving a critical alarm without an end: %v, want it refused", err)
	}
	if _, err := e.Shelve(Action{Alarm: "wall-too-hot", Until: t0.Add(time.Hour), At: t0}); err != nil {
		t.Errorf("shelving a critical alarm for 1 h: %v", err)
	}
}

// A shelf stored without an end (by an older version) ends at the longest
// allowed after it began, not never.
func TestStoredForeverShelfEnds(t *testing.T) {
	e := NewEngine([]*Alarm{limitAlarm(0, 0, 0)})
	e.SetShelfLimits(ShelfLimits{Default: time.Hour, Max: 24 * time.Hour})
	if _, err := e.Attach(&savedStore{saved: []Saved{{Alarm: "rough-lost", Shelved: true, Since: t0, Acked: true}}}); err != nil {
		t.Fatal(err)
	}
	if evs := e.Tick(t0.Add(23 * time.Hour)); len(evs) != 0 {
		t.Errorf("before 24 h: %v", kinds(evs))
	}
	if evs := e.Tick(t0.Add(24 * time.Hour)); len(evs) != 1 || evs[0].Kind != Unshelved {
		t.Errorf("24 h after a shelf stored without an end: %v, want unshelved", kinds(evs))
	}
}

// refusingStore refuses every save, as a full disk does.
type refusingStore struct{ savedStore }

func (s *refusingStore) Save([]Saved, []Event) error {
	return errors.New("no space left on device (injected)")
}

// An operator action whose transition cannot be stored is done, says so
// (ErrNotStored, for the API to answer 503 and not notify), and its
// transition comes from the first step that stores it, once.
func TestActionNotStoredWaits(t *testing.T) {
	e := NewEngine([]*Alarm{limitAlarm(0, 0, 0)})
	st := &refusingStore{}
	if _, err := e.Attach(st); err != nil {
		t.Fatal(err)
	}
	_, err := e.Shelve(Action{Alarm: "rough-lost", Reason: "pump swap", Until: t0.Add(time.Hour), At: t0})
	if !errors.Is(err, ErrNotStored) {
		t.Fatalf("shelve while saves fail: %v, want ErrNotStored", err)
	}
	if evs := e.Tick(t0.Add(time.Second)); len(evs) != 0 {
		t.Errorf("still failing: handed over %v", kinds(evs))
	}
	e.mu.Lock()
	e.store = &st.savedStore // writes work again
	e.mu.Unlock()
	evs := e.Tick(t0.Add(2 * time.Second))
	if len(evs) != 1 || evs[0].Kind != ShelvedEv {
		t.Errorf("once stored: %v, want the shelving once", kinds(evs))
	}
	if evs := e.Tick(t0.Add(3 * time.Second)); len(evs) != 0 {
		t.Errorf("again: %v, want nothing", kinds(evs))
	}
}

// The wait for a save is bounded: a chattering alarm while the disk is
// full gives up the middle of its transitions past MaxWaiting, keeps how
// the episode began and where it stands, counts what it gave up, and
// never reuses a sequence number for what it hands over afterwards.
func TestWaitingTransitionsBounded(t *testing.T) {
	chatter := func(e *Engine, n int) (transitions int) {
		for i := range n {
			v := 5.0
			if i%2 == 1 {
				v = 50
			}
			for _, ev := range e.Observe("chamber", pa(v, i)) {
				if ev.Transition() {
					transitions++
				}
			}
		}
		return transitions
	}
	// A twin with a working store says how many transitions the chatter makes.
	twin := NewEngine([]*Alarm{limitAlarm(0, 0, 0)})
	if _, err := twin.Attach(&savedStore{}); err != nil {
		t.Fatal(err)
	}
	const crossings = 3 * MaxWaiting
	total := chatter(twin, crossings)
	if total <= MaxWaiting {
		t.Fatalf("the chatter made only %d transitions; the test needs more than %d", total, MaxWaiting)
	}

	e := NewEngine([]*Alarm{limitAlarm(0, 0, 0)})
	st := &refusingStore{}
	if _, err := e.Attach(st); err != nil {
		t.Fatal(err)
	}
	if n := chatter(e, crossings); n != 0 {
		t.Fatalf("%d transitions handed over while saves fail", n)
	}
	e.mu.Lock()
	waiting := len(e.waiting)
	e.store = &st.savedStore // writes work again
	e.mu.Unlock()
	if waiting > MaxWaiting || waiting < MaxWaiting*3/4 {
		t.Errorf("%d transitions held in memory, want 3/4 MaxWaiting to MaxWaiting (%d)", waiting, MaxWaiting)
	}
	if got, want := e.DroppedTransitions(), uint64(total-waiting); got != want {
		t.Errorf("dropped %d, want %d (%d made, %d kept)", got, want, total, waiting)
	}
	evs := e.Tick(t0.Add(crossings * time.Second))
	if len(evs) != waiting {
		t.Fatalf("handed over %d once stored, want the %d kept", len(evs), waiting)
	}
	for i, ev := range evs[:MaxWaiting/2] {
		if ev.Seq != uint64(i+1) {
			t.Fatalf("kept transition %d has seq %d: the episode's beginning is not kept whole", i, ev.Seq)
		}
	}
	if evs[0].Seq != 1 || evs[len(evs)-1].Seq != uint64(total) {
		t.Errorf("kept seq %d … %d, want the first (1) and the newest (%d)", evs[0].Seq, evs[len(evs)-1].Seq, total)
	}
	for i := 1; i < len(evs); i++ {
		if evs[i].Seq <= evs[i-1].Seq {
			t.Fatalf("seq %d after %d: out of order", evs[i].Seq, evs[i-1].Seq)
		}
	}
	after := e.Observe("chamber", pa(5, crossings+1))
	after = append(after, e.Observe("chamber", pa(50, crossings+2))...)
	for _, ev := range after {
		if ev.Transition() && ev.Seq <= uint64(total) {
			t.Errorf("a transition after the episode reuses seq %d", ev.Seq)
		}
	}
}
