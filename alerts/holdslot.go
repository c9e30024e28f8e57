package alerts

import "math"

// ClaimHoldTest records that hold test id is running, so that no second one
// starts: a hold test isolates the chamber and two would disturb each
// other's record. It returns the id of the test already running and false
// when there is one (claiming the same id again succeeds).
func (e *Engine) ClaimHoldTest(id string) (running string, ok bool) {
	e.mu.Lock()
	defer e.mu.Unlock()
	if e.holdTest != "" && e.holdTest != id {
		return e.holdTest, false
	}
	e.holdTest = id
	return id, true
}

// ReleaseHoldTest records that hold test id has ended; releasing a test
// that does not hold the claim changes nothing.
func (e *Engine) ReleaseHoldTest(id string) {
	e.mu.Lock()
	defer e.mu.Unlock()
	if e.holdTest == id {
		e.holdTest = ""
	}
}

// RunningHoldTest returns the id of the hold test holding the claim, or "".
func (e *Engine) RunningHoldTest() string {
	e.mu.Lock()
	defer e.mu.Unlock()
	return e.holdTest
}

// HoldTestProvoked returns, in configuration order, the alarms a hold test
// on gauge knowingly provokes by isolating the chamber: every rise watch
// (the test makes the pressure rise on purpose) and every upper limit on
// gauge (the isolated pressure climbs past it). Alarms already suppressed
// or out of service are left out: someone else holds them.
func (e *Engine) HoldTestProvoked(gauge string) []string {
	e.mu.Lock()
	defer e.mu.Unlock()
	var out []string
	for _, st := range e.all {
		if st.s.Suppressed || st.s.OutOfService {
			continue
		}
		switch r := st.a.Rule.(type) {
		case *RiseWatch:
			out = append(out, st.a.Name)
		case *Limit:
			if r.Gauge == gauge && !math.IsNaN(r.Above) {
				out = append(out, st.a.Name)
			}
		}
	}
	return out
}

// AlarmActive reports whether the named alarm's condition holds.
func (e *Engine) AlarmActive(name string) bool {
	e.mu.Lock()
	defer e.mu.Unlock()
	st := e.byName[name]
	return st != nil && st.s.Active
}
