package alerts

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
