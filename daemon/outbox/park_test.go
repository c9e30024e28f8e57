package outbox

import (
	"errors"
	"fmt"
	"slices"
	"testing"
	"testing/synctest"
	"time"
)

// refusal is a receiver's answer that will not change on retry, as an
// HTTP 400 is (RFC 9110 §15.5: the client must not repeat the request
// without modifying it).
type refusal struct{ key string }

func (r refusal) Error() string   { return "400 Bad Request: invented refusal of " + r.key }
func (r refusal) Permanent() bool { return true }

func TestPermanent(t *testing.T) {
	cases := []struct {
		err  error
		want bool
	}{
		{nil, false},
		{errors.New("connection refused"), false},
		{refusal{"k"}, true},
		{fmt.Errorf("send: %w", refusal{"k"}), true},
		{errors.Join(errors.New("x"), refusal{"k"}), true},
	}
	for _, c := range cases {
		if got := Permanent(c.err); got != c.want {
			t.Errorf("Permanent(%v) = %v, want %v", c.err, got, c.want)
		}
	}
}

// A batch refused for good is sent again one entry at a time, at once:
// the refused entry is parked with its reason, the others are delivered,
// and the queue goes on. The parked key is not queued again.
func TestRefusedEntryParkedQueueGoesOn(t *testing.T) {
	synctest.Test(t, func(t *testing.T) {
		fake := &fakeSender{}
		fake.fail = func(int) error {
			last := fake.calls[len(fake.calls)-1] // fakeSender holds its lock while fail runs
			if slices.Contains(last.keys, "2") {
				return refusal{"2"}
			}
			return nil
		}
		h := newHarness(t, Policy{GroupWait: time.Second, MinBackoff: time.Minute}, fake)
		for _, k := range []string{"1", "2", "3"} {
			h.enqueue(k)
		}
		time.Sleep(2 * time.Second)
		synctest.Wait()
		if got, want := h.describe(), "1s[1 2 3] 1s[1] 1s[2] 1s[3]"; got != want {
			t.Errorf("sends %s, want %s", got, want)
		}
		hl := h.health()
		if hl.Queued != 0 || hl.Parked != 1 || hl.Refused != 1 || hl.Delivered != 2 || !hl.Oldest.IsZero() {
			t.Errorf("health %+v, want 0 queued, 1 parked, 2 delivered", hl)
		}
		if !hl.LastParked.Equal(h.start.Add(time.Second)) {
			t.Errorf("last parked %v, want 1 s after the start", hl.LastParked)
		}
		p, err := h.ob.Parked("hook")
		if err != nil || len(p) != 1 {
			t.Fatalf("parked %+v, %v; want one entry", p, err)
		}
		if p[0].Key != "2" || string(p[0].Payload) != "payload of 2" || p[0].Reason != (refusal{"2"}).Error() || p[0].Attempts != 1 {
			t.Errorf("parked entry %+v", p[0])
		}
		if ok, err := h.ob.Enqueue("hook", "2", nil); ok || err != nil {
			t.Errorf("a parked key was queued again (%v, %v)", ok, err)
		}
		h.enqueue("4") // the queue still works, in batches again
		h.enqueue("5")
		time.Sleep(2 * time.Second)
		synctest.Wait()
		if got, want := h.describe(), "1s[1 2 3] 1s[1] 1s[2] 1s[3] 3s[4 5]"; got != want {
			t.Errorf("sends %s, want %s", got, want)
		}
	})
}

// A refusal that is not permanent (a 503, a refused connection) keeps
// the entry at the head of the queue, retried; the age of the oldest
// queued entry grows meanwhile.
func TestTransientFailureKeepsHead(t *testing.T) {
	synctest.Test(t, func(t *testing.T) {
		fake := &fakeSender{fail: func(int) error { return errors.New("503 Service Unavailable") }}
		h := newHarness(t, Policy{GroupWait: time.Second, MinBackoff: time.Minute}, fake)
		h.enqueue("1")
		time.Sleep(10 * time.Minute)
		synctest.Wait()
		hl := h.health()
		if hl.Queued != 1 || hl.Parked != 0 || !hl.Oldest.Equal(h.start) {
			t.Errorf("health %+v, want the entry queued since the start", hl)
		}
	})
}

// Parked entries are kept for KeepDelivered, then forgotten with their key.
func TestPruneParked(t *testing.T) {
	synctest.Test(t, func(t *testing.T) {
		fake := &fakeSender{fail: func(int) error { return refusal{"old"} }}
		h := newHarness(t, Policy{KeepDelivered: 3 * time.Hour}, fake)
		h.enqueue("old")
		time.Sleep(2 * time.Hour)
		synctest.Wait()
		if hl := h.health(); hl.Parked != 1 {
			t.Fatalf("health %+v, want 1 parked", hl)
		}
		time.Sleep(2*time.Hour + time.Minute)
		synctest.Wait()
		if hl := h.health(); hl.Parked != 0 {
			t.Errorf("health %+v: an entry parked 4 h ago (keep 3 h) is still kept", hl)
		}
		if ok, _ := h.ob.Enqueue("hook", "old", nil); !ok {
			t.Error("the key of a pruned parked entry is still remembered")
		}
	})
}
