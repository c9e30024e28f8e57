package notify

import (
	"slices"
	"strings"
	"sync"
	"time"
)

// A Resender remembers what an Alertmanager must be told again: every
// alarm that is active, and every alarm cleared within ResolvedResend. It
// lives in memory; after a restart the daemon seeds it from its alarm
// states, and an alert cleared just before the restart expires on its own
// at its last endsAt. It is safe for concurrent use.
type Resender struct {
	mu   sync.Mutex
	last map[string]Transition // by alarm
}

// NewResender returns an empty Resender.
func NewResender() *Resender { return &Resender{last: map[string]Transition{}} }

// Observe records an alarm's newest transition (reminders change nothing).
func (r *Resender) Observe(t Transition) {
	if t.Reminder > 0 {
		return
	}
	r.mu.Lock()
	defer r.mu.Unlock()
	if old, ok := r.last[t.Alarm]; ok && old.At.After(t.At) {
		return // a late copy of an older transition
	}
	if !t.Active() && t.Since.IsZero() {
		if old, ok := r.last[t.Alarm]; ok {
			t.Since = old.Since // a resolved alert keeps its startsAt
			if t.Since.IsZero() {
				t.Since = old.At
			}
		}
	}
	r.last[t.Alarm] = t
}

// Due lists the transitions to post again at now, sorted by alarm:
// active ones, and cleared ones for ResolvedResend after they cleared.
// Older cleared ones are forgotten.
func (r *Resender) Due(now time.Time) []Transition {
	r.mu.Lock()
	defer r.mu.Unlock()
	var out []Transition
	for name, t := range r.last {
		if !t.Active() && now.Sub(t.At) > ResolvedResend {
			delete(r.last, name)
			continue
		}
		out = append(out, t)
	}
	slices.SortFunc(out, func(a, b Transition) int { return strings.Compare(a.Alarm, b.Alarm) })
	return out
}

// Seed records t only when the alarm is not known yet: it adds alarms
// found active after a restart without overriding newer transitions.
func (r *Resender) Seed(t Transition) {
	r.mu.Lock()
	_, known := r.last[t.Alarm]
	r.mu.Unlock()
	if !known {
		r.Observe(t)
	}
}
