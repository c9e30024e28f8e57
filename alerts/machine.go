package alerts

import (
	"strconv"
	"strings"
	"time"
)

// Chattering defaults: an alarm raised 3 or more times within 1 minute is
// chattering (a starting criterion common in alarm-management practice; the
// alarm-management literature on chattering and fleeting alarms uses it).
const (
	DefaultChatterCount  = 3
	DefaultChatterWindow = time.Minute
)

// An Alarm is one configured alarm: a rule that decides its condition and
// the settings the state machine applies to it.
type Alarm struct {
	Name     string
	Gauge    string // the gauge the alarm is about (its label in metrics)
	Severity Severity
	Rule     Rule
	OnDelay  time.Duration // the condition must hold this long before the alarm is raised
	OffDelay time.Duration // and be gone this long before it clears
	// Message is a template for the raise message; {alarm}, {gauge},
	// {value}, {limit}, {detail}, {duration} and {severity} are replaced.
	// Empty means "{gauge} {detail} for {duration}".
	Message       string
	ChatterCount  int           // raises within ChatterWindow that make it chattering; 0: default
	ChatterWindow time.Duration // 0: default
}

// DefaultMessage is the template used when an Alarm has none.
const DefaultMessage = "{gauge} {detail} for {duration}"

// Saved is the part of an alarm's state that survives a restart.
type Saved struct {
	Alarm        string
	Active       bool // in alarm, past the on-delay
	Acked        bool // the current (or last) occurrence is acknowledged
	Since        time.Time
	Pending      bool      // the condition differs from Active; a delay runs
	PendingSince time.Time // since when
	Occurrence   uint64
	Seq          uint64
	Raised       int
	Shelved      bool
	ShelvedUntil time.Time
	Suppressed   bool
	OutOfService bool
	Reason       string
	Raises       []time.Time // recent raises, for chattering
	Chattering   bool
	Message      string
}

// State returns the IEC 62682 state the saved flags amount to.
func (s *Saved) State() State {
	switch {
	case s.OutOfService:
		return OutOfService
	case s.Suppressed:
		return Suppressed
	case s.Shelved:
		return Shelved
	case s.Active && !s.Acked:
		return Unacknowledged
	case s.Active:
		return Acknowledged
	case !s.Acked:
		return ReturnedUnacknowledged
	}
	return Normal
}

func (s *Saved) hidden() bool { return s.OutOfService || s.Suppressed || s.Shelved }

type alarmState struct {
	a        *Alarm
	instance string // prefixes dedupe keys; see Engine.Attach
	s        Saved
	last     Condition
	dirty    bool
	seen     bool // a known condition has been fed since the engine started
}

func newAlarmState(a *Alarm) *alarmState {
	return &alarmState{a: a, s: Saved{Alarm: a.Name, Acked: true}, last: unknown()}
}

// event builds a transition event and advances the sequence number.
func (st *alarmState) event(k EventKind, at time.Time, msg string) Event {
	st.s.Seq++
	st.dirty = true
	state := st.s.State()
	return Event{Kind: k, Alarm: st.a.Name, Gauge: st.a.Gauge, Severity: st.a.Severity, At: at, Message: msg,
		State: state, Value: st.last.Value, Limit: st.last.Limit, Unit: st.last.Unit,
		Occurrence: st.s.Occurrence, Seq: st.s.Seq, DedupeKey: dedupeKey(st.instance, st.a.Name, st.s.Seq, state)}
}

// apply feeds one condition at time at and returns the events it causes.
func (st *alarmState) apply(c Condition, at time.Time, evs []Event) []Event {
	if !c.Known {
		return evs
	}
	st.last = c
	// Watching that begins with the condition already true (a chamber
	// at atmosphere when the pump-down rule starts) is not a crossing: the
	// on-delay runs, but no limit-crossed news is given for it.
	first := !st.seen
	st.seen = true
	if c.Active == st.s.Active {
		if st.s.Pending {
			st.s.Pending, st.dirty = false, true
		}
		return evs
	}
	if !st.s.Pending {
		st.s.Pending, st.s.PendingSince, st.dirty = true, at, true
		if c.Active && st.a.OnDelay > 0 && !st.s.hidden() && !first {
			evs = append(evs, Event{Kind: LimitCrossed, Alarm: st.a.Name, Gauge: st.a.Gauge, Severity: st.a.Severity,
				At: at, Message: st.a.Gauge + " " + c.Detail, State: st.s.State(), Value: c.Value, Limit: c.Limit, Unit: c.Unit,
				Occurrence: st.s.Occurrence, Seq: st.s.Seq})
		}
	}
	return st.settle(at, evs)
}

// settle completes a pending change whose delay has run out by at.
func (st *alarmState) settle(at time.Time, evs []Event) []Event {
	if !st.s.Pending {
		return evs
	}
	delay := st.a.OffDelay
	if !st.s.Active {
		delay = st.a.OnDelay
	}
	held := at.Sub(st.s.PendingSince)
	if held < delay {
		return evs
	}
	st.s.Pending, st.s.Active, st.s.Since = false, !st.s.Active, at
	if !st.s.Active {
		return append(evs, st.event(Cleared, at, st.a.Gauge+" back to normal: "+st.last.Detail))
	}
	st.s.Occurrence++
	st.s.Raised++
	st.s.Acked = st.s.hidden() // a hidden alarm asks nobody to acknowledge it
	st.s.Message = st.render(held)
	evs = append(evs, st.event(Raised, at, st.s.Message))
	return st.chatter(at, evs)
}

// chatter records a raise and reports when the alarm starts chattering.
func (st *alarmState) chatter(at time.Time, evs []Event) []Event {
	n, w := st.a.ChatterCount, st.a.ChatterWindow
	if n <= 0 {
		n = DefaultChatterCount
	}
	if w <= 0 {
		w = DefaultChatterWindow
	}
	keep := st.s.Raises[:0]
	for _, t := range st.s.Raises {
		if at.Sub(t) < w {
			keep = append(keep, t)
		}
	}
	st.s.Raises = append(keep, at)
	was := st.s.Chattering
	st.s.Chattering = len(st.s.Raises) >= n
	if st.s.Chattering && !was {
		evs = append(evs, st.event(Chattering, at, st.a.Name+" is chattering: raised "+
			strconv.Itoa(len(st.s.Raises))+" times within "+w.String()+"; widen its deadband or delays"))
	}
	return evs
}

// quiet ends the chattering flag once a whole window has passed without a raise.
func (st *alarmState) quiet(now time.Time) {
	w := st.a.ChatterWindow
	if w <= 0 {
		w = DefaultChatterWindow
	}
	if st.s.Chattering && len(st.s.Raises) > 0 && now.Sub(st.s.Raises[len(st.s.Raises)-1]) >= w {
		st.s.Chattering, st.s.Raises, st.dirty = false, nil, true
	}
}

func (st *alarmState) render(held time.Duration) string {
	t := st.a.Message
	if t == "" {
		t = DefaultMessage
		if held < time.Second {
			t = "{gauge} {detail}"
		}
	}
	c := st.last
	return strings.NewReplacer("{alarm}", st.a.Name, "{gauge}", st.a.Gauge, "{value}", c.ValueText,
		"{limit}", c.LimitText, "{detail}", c.Detail, "{duration}", held.Round(time.Second).String(),
		"{severity}", string(st.a.Severity)).Replace(t)
}

func (st *alarmState) status() AlarmStatus {
	s := st.s
	return AlarmStatus{Alarm: st.a.Name, Gauge: st.a.Gauge, Kind: st.a.Rule.Kind(), Severity: st.a.Severity,
		State: s.State(), Active: s.Active, Acked: s.Acked, Since: s.Since, Raised: s.Raised, Occurrence: s.Occurrence,
		Chattering: s.Chattering, Until: s.ShelvedUntil, Reason: s.Reason, Message: s.Message,
		Value: st.last.Value, Limit: st.last.Limit, ValueText: st.last.ValueText, LimitText: st.last.LimitText}
}
