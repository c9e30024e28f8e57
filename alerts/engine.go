package alerts

import (
	"sync"
	"time"

	"holdfast/calib"
)

// An EventKind says what happened to an alarm.
type EventKind string

// The events an Engine reports.
const (
	LimitCrossed EventKind = "limit-crossed" // the condition became true; the on-delay runs
	Raised       EventKind = "raised"        // the condition held for the on-delay
	Cleared      EventKind = "cleared"       // the condition is no longer true
)

// An Event is one change of one alarm.
type Event struct {
	Kind     EventKind
	Alarm    string
	Gauge    string
	Severity Severity
	At       time.Time
	Message  string
}

// An AlarmStatus is one alarm's current condition, for metrics and the API.
type AlarmStatus struct {
	Alarm    string
	Gauge    string
	Severity Severity
	Active   bool
	Since    time.Time // when it became active
	Raised   int       // times raised since start
}

type limitState struct {
	rule     *Limit
	armed    bool
	pending  bool      // condition true, on-delay running
	since    time.Time // when the condition became true
	active   bool
	activeAt time.Time
	raised   int
}

// An Engine evaluates alarm rules on samples as they arrive. It is safe for
// concurrent use: pollers call Observe, the metrics collector calls Status.
type Engine struct {
	mu      sync.Mutex
	byGauge map[string][]*limitState
	all     []*limitState
}

// NewEngine returns an engine for the given rules.
func NewEngine(limits []*Limit) *Engine {
	e := &Engine{byGauge: map[string][]*limitState{}}
	for _, l := range limits {
		st := &limitState{rule: l, armed: !l.WaitForNormal}
		e.byGauge[l.Gauge] = append(e.byGauge[l.Gauge], st)
		e.all = append(e.all, st)
	}
	return e
}

// Observe evaluates every rule on gauge against s and returns what changed.
func (e *Engine) Observe(gauge string, s calib.Sample) []Event {
	e.mu.Lock()
	defer e.mu.Unlock()
	var evs []Event
	for _, st := range e.byGauge[gauge] {
		evs = st.observe(s, evs)
	}
	return evs
}

func (st *limitState) observe(s calib.Sample, evs []Event) []Event {
	r := st.rule
	ev := func(k EventKind, msg string) Event {
		return Event{Kind: k, Alarm: r.Name, Gauge: r.Gauge, Severity: r.Severity, At: s.At, Message: msg}
	}
	breached, known, limit, dir := r.breach(s)
	switch {
	case !known:
		return evs // no value: hold the state; stale and fault rules speak for it
	case !st.armed:
		st.armed = !breached
		return evs
	case breached && !st.pending && !st.active:
		st.pending, st.since = true, s.At
		evs = append(evs, ev(LimitCrossed, r.describe(s, limit, dir)))
	case !breached && (st.pending || st.active):
		if st.active {
			evs = append(evs, ev(Cleared, r.Gauge+" back within limits"))
		}
		st.pending, st.active = false, false
		return evs
	}
	if st.pending && !st.active && s.At.Sub(st.since) >= r.OnDelay {
		st.pending, st.active, st.activeAt = false, true, s.At
		st.raised++
		evs = append(evs, ev(Raised, r.describe(s, limit, dir)+" for "+s.At.Sub(st.since).Round(time.Second).String()))
	}
	return evs
}

// Status returns every alarm's condition, in rule order.
func (e *Engine) Status() []AlarmStatus {
	e.mu.Lock()
	defer e.mu.Unlock()
	out := make([]AlarmStatus, len(e.all))
	for i, st := range e.all {
		out[i] = AlarmStatus{Alarm: st.rule.Name, Gauge: st.rule.Gauge, Severity: st.rule.Severity,
			Active: st.active, Since: st.activeAt, Raised: st.raised}
	}
	return out
}
