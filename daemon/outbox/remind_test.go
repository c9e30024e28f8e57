package outbox

import (
	"context"
	"testing"
	"testing/synctest"
	"time"
)

func (h *harness) remind(alarm, key string, every time.Duration) {
	h.t.Helper()
	err := h.ob.Update(func(t *Tx) error { return t.Remind("hook", alarm, key, []byte("p"), every) })
	if err != nil {
		h.t.Fatal(err)
	}
}

// Reminders go out every interval under their own keys until stopped;
// scheduling the same transition again keeps the running schedule.
func TestReminders(t *testing.T) {
	synctest.Test(t, func(t *testing.T) {
		h := newHarness(t, Policy{}, &fakeSender{})
		h.enqueue("vac/raised")
		h.remind("vac", "vac/raised", time.Hour)
		time.Sleep(90 * time.Minute)
		h.remind("vac", "vac/raised", time.Hour) // reported again (a restart): no reset
		time.Sleep(time.Hour)
		synctest.Wait()
		if err := h.ob.Update(func(t *Tx) error { return t.StopReminder("hook", "vac") }); err != nil {
			t.Fatal(err)
		}
		time.Sleep(5 * time.Hour)
		synctest.Wait()
		want := "0s[vac/raised] 3600s[vac/raised#reminder-1] 7200s[vac/raised#reminder-2]"
		if got := h.describe(); got != want {
			t.Errorf("sends:\n got %s\nwant %s", got, want)
		}
	})
}

// A new transition of the alarm replaces its schedule and restarts the count.
func TestReminderReplacedByNewKey(t *testing.T) {
	synctest.Test(t, func(t *testing.T) {
		h := newHarness(t, Policy{}, &fakeSender{})
		h.remind("vac", "vac/raised@1", time.Hour)
		time.Sleep(30 * time.Minute)
		h.remind("vac", "vac/raised@2", time.Hour)
		time.Sleep(time.Hour)
		synctest.Wait()
		if got, want := h.describe(), "5400s[vac/raised@2#reminder-1]"; got != want {
			t.Errorf("sends: got %s, want %s", got, want)
		}
		err := h.ob.Update(func(t *Tx) error { return t.Remind("hook", "vac", "k", nil, 0) })
		if err == nil {
			t.Error("a zero reminder interval was accepted")
		}
	})
}

// A reminder missed while the daemon was down is sent once, not once per
// missed interval.
func TestMissedRemindersCollapse(t *testing.T) {
	synctest.Test(t, func(t *testing.T) {
		fake := &fakeSender{}
		h := newHarness(t, Policy{}, fake)
		h.remind("vac", "vac/raised", time.Minute)
		h.stop()
		time.Sleep(time.Hour)
		ctx, cancel := context.WithCancel(t.Context())
		done := make(chan struct{})
		go func() { h.ob.Run(ctx); close(done) }()
		time.Sleep(30 * time.Second)
		synctest.Wait()
		cancel()
		<-done
		if got, want := h.describe(), "3600s[vac/raised#reminder-1]"; got != want {
			t.Errorf("sends: got %s, want %s", got, want)
		}
	})
}
