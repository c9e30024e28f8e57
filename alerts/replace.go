package alerts

import (
	"fmt"
	"slices"
)

// Replace swaps in a new set of alarms while the engine runs, as a config
// reload does, keeping every alarm's state by name:
//
//   - an alarm given as the very *Alarm the engine runs is kept whole: its
//     state, the delay in progress, its chatter record and its rule's
//     internals (a rise watch's window of samples);
//   - an alarm whose name runs under another *Alarm (its rule or settings
//     changed) keeps its state (active, acknowledged, shelved and until
//     when, sequence number, raise count) but starts its new rule afresh:
//     its condition is decided again by the next samples (or ticks) and
//     leaves its state through the normal path, with a history record;
//   - a new name starts from its stored state if it has one (an alarm
//     removed by an earlier reload and now back), else normal, so that
//     sequence numbers and dedupe keys never repeat;
//   - an alarm not given stops; its stored state and history stay in the
//     store, and a state not yet stored (saves failing) is still stored.
//
// Transitions waiting to be stored keep waiting, whatever alarm they are
// of. Names must be unique. Replace changes nothing when it fails (the
// stored states could not be read).
func (e *Engine) Replace(alarms []*Alarm) error {
	seen := make(map[string]bool, len(alarms))
	for _, a := range alarms {
		if seen[a.Name] {
			return fmt.Errorf("alarm %q given twice", a.Name)
		}
		seen[a.Name] = true
	}
	e.mu.Lock()
	defer e.mu.Unlock()
	stored, err := e.storedFor(alarms)
	if err != nil {
		return err
	}
	if e.store != nil {
		e.collectDirty() // the states of alarms about to go wait in unsaved to be stored
	}
	byGauge, byName := map[string][]*alarmState{}, make(map[string]*alarmState, len(alarms))
	all := make([]*alarmState, 0, len(alarms))
	for _, a := range alarms {
		st := e.byName[a.Name]
		switch {
		case st == nil:
			st = newAlarmState(a)
			st.instance = e.instance
			if s, ok := stored[a.Name]; ok {
				st.s = s
				e.endlessShelf(st)
			}
			e.isolate(st)
		case st.a != a:
			st.a, st.last = a, unknown() // the old rule's last condition says nothing of the new one's
			e.isolate(st)
		}
		for _, g := range a.Rule.Gauges() {
			byGauge[g] = append(byGauge[g], st)
		}
		byName[a.Name] = st
		all = append(all, st)
	}
	e.byGauge, e.byName, e.all = byGauge, byName, all
	return nil
}

// storedFor returns the last known state of each alarm of alarms the
// engine does not run: the newest one not yet stored, else the stored one.
// The caller holds mu.
func (e *Engine) storedFor(alarms []*Alarm) (map[string]Saved, error) {
	if !e.attached || e.store == nil || !slices.ContainsFunc(alarms, func(a *Alarm) bool { return e.byName[a.Name] == nil }) {
		return nil, nil
	}
	saved, err := e.store.Load()
	if err != nil {
		return nil, fmt.Errorf("load alarm state: %w", err)
	}
	out := make(map[string]Saved, len(saved))
	for _, s := range saved {
		out[s.Alarm] = s
	}
	for name, s := range e.unsaved {
		s.Raises = slices.Clone(s.Raises)
		out[name] = s
	}
	return out, nil
}

// endlessShelf gives a shelf stored without an end (by an older version)
// the longest allowed after it began. The caller holds mu.
func (e *Engine) endlessShelf(st *alarmState) {
	if st.s.Shelved && st.s.ShelvedUntil.IsZero() {
		st.s.ShelvedUntil, st.dirty = st.s.Since.Add(e.shelf.Max), true
	}
}

// isolate tells a new rise-watch rule what SetIsolated last said.
func (e *Engine) isolate(st *alarmState) {
	if rw, ok := st.a.Rule.(*RiseWatch); ok && e.isolated {
		rw.SetIsolated(true)
	}
}
