package alerts

import (
	"errors"
	"fmt"
	"slices"
	"strings"
	"sync"
	"time"

	"holdfast/calib"
)

// A Store keeps alarm state and history across restarts. Save writes the
// changed states and the transition events of one step in one transaction,
// so that after a crash the state and the history agree. Events that should
// reach a person are kept as undelivered until Delivered is called with
// their dedupe keys; Undelivered returns them after a restart.
type Store interface {
	Load() ([]Saved, error)
	Save(states []Saved, events []Event) error
	Delivered(keys []string) error
	Undelivered() ([]Event, error)
}

// An Engine runs the alarm state machine over a set of alarms. It is safe
// for concurrent use: pollers call Observe, the alarm loop calls Tick, the
// API calls the operator actions, metrics call Status. It takes every time
// from samples or from its callers, never from the wall clock.
//
// A new Engine decides nothing until Attach has restored the stored state,
// so no transition is reported twice across a restart.
type Engine struct {
	mu       sync.Mutex
	byGauge  map[string][]*alarmState
	byName   map[string]*alarmState
	all      []*alarmState
	store    Store
	attached bool
	saveErr  error
	unsaved  map[string]Saved // states whose save failed, by alarm, newest
	waiting  []Event          // transitions whose save failed, oldest first
	dropped  uint64           // waiting transitions given up to keep the wait bounded
	instance string           // the data file's instance id; prefixes dedupe keys
	holdTest string           // id of the hold test running, if any; see ClaimHoldTest
	shelf    ShelfLimits
	isolated bool // what SetIsolated last said, for rise watches added by Replace
}

// ShelfLimits bound shelving: a shelf always ends. Default is how long a
// shelf asked for without an end lasts; Max is the longest any shelf may
// last. A critical alarm is never shelved without an end given.
type ShelfLimits struct {
	Default, Max time.Duration
}

// DefaultShelfLimits are the limits of an engine not given any: a shift
// (8 h) by default, a day at most.
var DefaultShelfLimits = ShelfLimits{Default: 8 * time.Hour, Max: 24 * time.Hour}

// SetShelfLimits sets how long shelving lasts by default and at most;
// a zero field keeps DefaultShelfLimits' value. It applies to shelving
// asked for from then on: a shelf already given keeps its end.
func (e *Engine) SetShelfLimits(l ShelfLimits) {
	e.mu.Lock()
	defer e.mu.Unlock()
	e.shelf = l.orDefault()
}

func (l ShelfLimits) orDefault() ShelfLimits {
	if l.Default <= 0 {
		l.Default = DefaultShelfLimits.Default
	}
	if l.Max <= 0 {
		l.Max = max(DefaultShelfLimits.Max, l.Default)
	}
	return l
}

// NewEngine returns an engine for the given alarms. Names must be unique.
func NewEngine(alarms []*Alarm) *Engine {
	e := &Engine{byGauge: map[string][]*alarmState{}, byName: map[string]*alarmState{}, shelf: DefaultShelfLimits}
	for _, a := range alarms {
		st := newAlarmState(a)
		for _, g := range a.Rule.Gauges() {
			e.byGauge[g] = append(e.byGauge[g], st)
		}
		e.byName[a.Name] = st
		e.all = append(e.all, st)
	}
	return e
}

// Attach restores the stored state of every alarm from st (nil keeps state
// in memory only) and starts the engine. It returns the transitions that
// were stored but not marked delivered before the last stop, for the caller
// to hand to its notifiers again (their dedupe keys are unchanged).
// Stored alarms that are no longer configured are left in the store.
//
// A store that also has a method Instance() string names the data file
// it keeps (a random id, new for every new or restored file); dedupe keys
// of new transitions start with it, so that they never repeat across
// files even though every file numbers its transitions from 1.
func (e *Engine) Attach(st Store) ([]Event, error) {
	e.mu.Lock()
	defer e.mu.Unlock()
	e.store, e.attached = st, true
	if st == nil {
		return nil, nil
	}
	if in, ok := st.(interface{ Instance() string }); ok {
		e.instance = in.Instance()
		for _, a := range e.all {
			a.instance = e.instance
		}
	}
	saved, err := st.Load()
	if err != nil {
		e.attached = false
		return nil, fmt.Errorf("load alarm state: %w", err)
	}
	for _, s := range saved {
		if a := e.byName[s.Alarm]; a != nil {
			a.s = s
			e.endlessShelf(a)
		}
	}
	evs, err := st.Undelivered()
	if err != nil {
		return nil, fmt.Errorf("load undelivered alarm events: %w", err)
	}
	return evs, nil
}

// Observe evaluates every alarm fed by gauge against s and returns what
// changed, after storing it.
func (e *Engine) Observe(gauge string, s calib.Sample) []Event {
	e.mu.Lock()
	defer e.mu.Unlock()
	if !e.attached {
		return nil
	}
	var evs []Event
	for _, st := range e.byGauge[gauge] {
		evs = st.apply(st.a.Rule.Observe(gauge, s, st.s.Active), s.At, evs)
	}
	// After a failed save only Tick (every second) and operator actions
	// try again: a sample must not cost a write attempt on a full disk.
	return e.commitOrWait(evs, e.saveErr == nil)
}

// Tick runs the time-driven part at now: rules that watch for silence,
// delays that ran out without a new sample, shelving that expired.
func (e *Engine) Tick(now time.Time) []Event {
	e.mu.Lock()
	defer e.mu.Unlock()
	if !e.attached {
		return nil
	}
	var evs []Event
	for _, st := range e.all {
		if st.s.Shelved && !st.s.ShelvedUntil.IsZero() && !now.Before(st.s.ShelvedUntil) {
			evs = st.unshelve(now, "the shelving expired", "", evs)
		}
		if c := st.a.Rule.Tick(now, st.s.Active); c.Known {
			evs = st.apply(c, now, evs)
		} else if st.s.Pending && st.last.Known && st.last.Active != st.s.Active {
			evs = st.settle(now, evs)
		}
		st.quiet(now)
	}
	return e.commit(evs)
}

// commitOrWait is commit, or, when try is false, the same bookkeeping
// without a save: the dirty states and the transitions join the wait.
func (e *Engine) commitOrWait(evs []Event, try bool) []Event {
	if try || e.store == nil {
		return e.commit(evs)
	}
	e.collectDirty()
	trans := e.waiting
	for _, ev := range evs {
		if ev.Transition() {
			trans = append(trans, ev)
		}
	}
	e.waiting = e.boundWaiting(trans)
	return slices.DeleteFunc(evs, Event.Transition)
}

// collectDirty moves the states changed since the last save into unsaved.
func (e *Engine) collectDirty() {
	for _, st := range e.all {
		if st.dirty {
			if e.unsaved == nil {
				e.unsaved = map[string]Saved{}
			}
			e.unsaved[st.a.Name] = st.s
			st.s.Raises = slices.Clone(st.s.Raises)
			st.dirty = false
		}
	}
}

// commit stores the dirty states and the transitions, after those whose
// save failed before, and returns what the caller may act on: the
// transitions that waited, oldest first, then evs. A transition is handed
// over only once stored, so a crash cannot hand a later transition a key
// already handed over (the stored sequence number would lag). When the
// save fails, every transition waits for the next commit (each Tick
// tries again) and only evs' limit crossings are returned. The caller
// holds mu.
func (e *Engine) commit(evs []Event) []Event {
	if e.store == nil {
		for _, st := range e.all {
			st.dirty = false
		}
		return evs
	}
	e.collectDirty()
	trans := slices.Clone(e.waiting)
	for _, ev := range evs {
		if ev.Transition() {
			trans = append(trans, ev)
		}
	}
	if len(e.unsaved) == 0 && len(trans) == 0 {
		return evs
	}
	states := make([]Saved, 0, len(e.unsaved))
	for _, st := range e.all { // configuration order, for a stable file
		if s, ok := e.unsaved[st.a.Name]; ok {
			states = append(states, s)
		}
	}
	states = append(states, e.unsavedGone()...)
	if e.saveErr = e.store.Save(states, trans); e.saveErr != nil {
		e.waiting = e.boundWaiting(trans)
		return slices.DeleteFunc(slices.Clone(evs), Event.Transition)
	}
	out := append(e.waiting, evs...)
	e.unsaved, e.waiting = nil, nil
	return out
}

// unsavedGone returns, by name, the unsaved states of alarms Replace
// removed: stored all the same, so that an alarm configured again later
// carries on from its last sequence number. The caller holds mu.
func (e *Engine) unsavedGone() []Saved {
	var out []Saved
	for name, s := range e.unsaved {
		if e.byName[name] == nil {
			out = append(out, s)
		}
	}
	slices.SortFunc(out, func(a, b Saved) int { return strings.Compare(a.Alarm, b.Alarm) })
	return out
}

// MaxWaiting bounds the transitions an engine holds while their save
// fails: a chattering alarm on a full disk for a weekend must not grow the
// daemon without end. Past it, the middle of the wait is given up: the
// oldest MaxWaiting/2 (how the episode began) and the newest MaxWaiting/4
// (where it stands) are kept, so that the next MaxWaiting/4 join without
// copying; the alarms' states themselves are never dropped.
const MaxWaiting = 4096

// boundWaiting keeps trans within MaxWaiting, counting what it gives up.
func (e *Engine) boundWaiting(trans []Event) []Event {
	if len(trans) <= MaxWaiting {
		return trans
	}
	head, tail := MaxWaiting/2, MaxWaiting/4
	e.dropped += uint64(len(trans) - head - tail)
	n := copy(trans[head:], trans[len(trans)-tail:])
	clear(trans[head+n:]) // let the given-up events go
	return trans[:head+n]
}

// DroppedTransitions returns how many transitions this engine gave up
// because more than MaxWaiting waited for a save.
func (e *Engine) DroppedTransitions() uint64 {
	e.mu.Lock()
	defer e.mu.Unlock()
	return e.dropped
}

// Delivered marks transitions as handed to the notifiers, by dedupe key.
func (e *Engine) Delivered(keys ...string) error {
	e.mu.Lock()
	st := e.store
	e.mu.Unlock()
	if st == nil || len(keys) == 0 {
		return nil
	}
	return st.Delivered(keys)
}

// StoreError returns the error of the last failed attempt to store alarm
// state, or nil once a save succeeds again. While it is not nil the
// transitions since the failure wait, in memory and in order, to be
// stored and handed over.
func (e *Engine) StoreError() error {
	e.mu.Lock()
	defer e.mu.Unlock()
	return e.saveErr
}

// Status returns every alarm's condition, in configuration order.
func (e *Engine) Status() []AlarmStatus {
	e.mu.Lock()
	defer e.mu.Unlock()
	out := make([]AlarmStatus, len(e.all))
	for i, st := range e.all {
		out[i] = st.status()
	}
	return out
}

// ErrUnknownAlarm reports an operator action on an alarm that is not configured.
var ErrUnknownAlarm = errors.New("no such alarm")

// ErrNoChange reports an operator action that does not apply in the alarm's state.
var ErrNoChange = errors.New("nothing to change")

// ErrNotStored means an operator action took effect but its transition
// could not be stored yet: it waits in the engine, which stores it and
// returns it from a later Tick (or Observe) for the caller to notify; the
// caller must not notify the event the action returned.
var ErrNotStored = errors.New("not stored yet")

// ErrShelfLimit means a shelving request broke the shelf limits: no end
// for a critical alarm, or an end past the longest allowed.
var ErrShelfLimit = errors.New("shelving limit")

// SetIsolated tells every rise-watch alarm that is not set to watch always
// whether the chamber is isolated from its pumps. Rise watches that read
// the isolation from a switch (RiseWatch.IsolatedBy) ignore it.
func (e *Engine) SetIsolated(on bool) {
	e.mu.Lock()
	defer e.mu.Unlock()
	e.isolated = on
	for _, st := range e.all {
		if rw, ok := st.a.Rule.(*RiseWatch); ok {
			rw.SetIsolated(on)
		}
	}
}

// RiseResults returns the newest analysis of each rise-watch alarm, by alarm name.
func (e *Engine) RiseResults() map[string]RiseResult {
	e.mu.Lock()
	defer e.mu.Unlock()
	out := map[string]RiseResult{}
	for _, st := range e.all {
		if rw, ok := st.a.Rule.(*RiseWatch); ok && rw.Last.Classification != "" {
			out[st.a.Name] = rw.Last
		}
	}
	return out
}
