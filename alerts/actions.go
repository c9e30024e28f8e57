package alerts

import (
	"fmt"
	"time"
)

// An Action is an operator's request on one alarm.
type Action struct {
	Alarm  string
	By     string    // who asks, for the history ("" when unknown)
	Reason string    // why (shelve, suppress, out of service)
	Until  time.Time // shelving expiry; zero means the engine's default length
	At     time.Time // when, on the daemon's clock
}

// Ack acknowledges the alarm's current occurrence: an unacknowledged alarm
// becomes acknowledged, a returned-unacknowledged one normal.
func (e *Engine) Ack(a Action) (Event, error) {
	return e.act(a, func(st *alarmState) (Event, error) {
		if st.s.Acked || st.s.hidden() {
			return Event{}, fmt.Errorf("alarm %s is %s: %w", st.a.Name, st.s.State(), ErrNoChange)
		}
		st.s.Acked, st.s.Since = true, a.At
		return st.event(Acked, a.At, st.a.Name+" acknowledged"+by(a.By)), nil
	})
}

// Shelve hides the alarm until a.Until. A shelf always ends: with no
// Until it lasts the engine's default (ShelfLimits), and no shelf may last
// longer than the maximum; a critical alarm must be given its end. While
// shelved the condition is still tracked but raises no one.
func (e *Engine) Shelve(a Action) (Event, error) {
	return e.act(a, func(st *alarmState) (Event, error) {
		if st.s.OutOfService {
			return Event{}, fmt.Errorf("alarm %s is out of service: %w", st.a.Name, ErrNoChange)
		}
		if a.Until.IsZero() {
			if st.a.Severity == SeverityCritical {
				return Event{}, fmt.Errorf("alarm %s is critical: say how long to shelve it (for, at most %s): %w", st.a.Name, e.shelf.Max, ErrShelfLimit)
			}
			a.Until = a.At.Add(e.shelf.Default)
		}
		if !a.Until.After(a.At) {
			return Event{}, fmt.Errorf("shelve %s until %s: that is not after now (%s)", st.a.Name, a.Until.Format(time.RFC3339), a.At.Format(time.RFC3339))
		}
		if a.Until.Sub(a.At) > e.shelf.Max {
			return Event{}, fmt.Errorf("shelve %s for %s: at most %s is allowed (shelving.max in the config): %w", st.a.Name, a.Until.Sub(a.At).Round(time.Second), e.shelf.Max, ErrShelfLimit)
		}
		st.s.Shelved, st.s.ShelvedUntil, st.s.Reason, st.s.Acked, st.s.Since = true, a.Until, a.Reason, true, a.At
		msg := st.a.Name + " shelved" + by(a.By) + " until " + a.Until.Format(time.RFC3339)
		ev := st.event(ShelvedEv, a.At, msg+because(a.Reason))
		ev.Until, ev.By = a.Until, a.By
		return ev, nil
	})
}

// Unshelve ends shelving: an alarm whose condition still holds is
// annunciated again as unacknowledged.
func (e *Engine) Unshelve(a Action) (Event, error) {
	return e.act(a, func(st *alarmState) (Event, error) {
		if !st.s.Shelved {
			return Event{}, fmt.Errorf("alarm %s is not shelved: %w", st.a.Name, ErrNoChange)
		}
		evs := st.unshelve(a.At, "unshelved"+by(a.By), a.By, nil)
		return evs[0], nil
	})
}

func (st *alarmState) unshelve(at time.Time, why, who string, evs []Event) []Event {
	st.s.Shelved, st.s.ShelvedUntil, st.s.Reason, st.s.Since = false, time.Time{}, "", at
	st.s.Acked = !st.s.Active || st.s.hidden()
	ev := st.event(Unshelved, at, st.a.Name+" "+why+st.stillActive())
	ev.By = who
	return append(evs, ev)
}

func (st *alarmState) stillActive() string {
	if st.s.Active && !st.s.hidden() {
		return "; still in alarm: " + st.last.Detail
	}
	return ""
}

// Suppress hides the alarm by design (on) or lifts that (off), as when the
// plant state makes the alarm meaningless (a chamber vented on purpose).
func (e *Engine) Suppress(a Action, on bool) (Event, error) {
	return e.act(a, func(st *alarmState) (Event, error) {
		if st.s.Suppressed == on {
			return Event{}, fmt.Errorf("alarm %s is already %s: %w", st.a.Name, st.s.State(), ErrNoChange)
		}
		st.s.Suppressed, st.s.Since = on, a.At
		k, word := SuppressedEv, " suppressed"
		if on {
			st.s.Reason, st.s.Acked = a.Reason, true
		} else {
			k, word, st.s.Reason = Unsuppressed, " no longer suppressed", ""
			st.s.Acked = !st.s.Active || st.s.hidden()
		}
		ev := st.event(k, a.At, st.a.Name+word+by(a.By)+because(a.Reason)+st.stillActive())
		ev.By = a.By
		return ev, nil
	})
}

// SetService takes the alarm out of service (out true), for maintenance,
// or returns it to service.
func (e *Engine) SetService(a Action, out bool) (Event, error) {
	return e.act(a, func(st *alarmState) (Event, error) {
		if st.s.OutOfService == out {
			return Event{}, fmt.Errorf("alarm %s is already %s: %w", st.a.Name, st.s.State(), ErrNoChange)
		}
		st.s.OutOfService, st.s.Since = out, a.At
		k, word := RemovedEv, " taken out of service"
		if out {
			st.s.Reason, st.s.Acked, st.s.Shelved, st.s.ShelvedUntil = a.Reason, true, false, time.Time{}
		} else {
			k, word, st.s.Reason = RestoredEv, " returned to service", ""
			st.s.Acked = !st.s.Active || st.s.hidden()
		}
		ev := st.event(k, a.At, st.a.Name+word+by(a.By)+because(a.Reason)+st.stillActive())
		ev.By = a.By
		return ev, nil
	})
}

func (e *Engine) act(a Action, f func(*alarmState) (Event, error)) (Event, error) {
	e.mu.Lock()
	defer e.mu.Unlock()
	st := e.byName[a.Alarm]
	if st == nil {
		return Event{}, fmt.Errorf("alarm %q: %w", a.Alarm, ErrUnknownAlarm)
	}
	if !e.attached {
		return Event{}, fmt.Errorf("alarm %s: the alarm state is not loaded yet; try again", a.Alarm)
	}
	ev, err := f(st)
	if err != nil {
		return Event{}, err
	}
	e.commit([]Event{ev})
	if e.saveErr != nil {
		return ev, fmt.Errorf("alarm %s: %s done but %w: it is stored and notified once the data file takes writes again: %w",
			a.Alarm, ev.Kind, ErrNotStored, e.saveErr)
	}
	return ev, nil
}

func by(who string) string {
	if who == "" {
		return ""
	}
	return " by " + who
}

func because(why string) string {
	if why == "" {
		return ""
	}
	return " (" + why + ")"
}
