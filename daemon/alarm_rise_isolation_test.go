package daemon

import (
	"testing"
	"time"

	"holdfast/alerts"
)

// The demo's rise watch runs with while: always, so its 5 min window holds
// pumped samples when the valve closes at 3:50. The analysis that raises the
// alarm must fit only the isolated part and find the simulated leak, and no
// conclusive analysis during the isolation may state an interval (k = 2)
// that misses it by more than the chamber's own outgassing can add.
//
// Hand calculation from the scenario (deploy/examples/demo.yaml): the leak
// opened at 3:30 is 6e-4 mbar·L/s = 6e-5 Pa·m³/s (1 mbar·L/s = 0.1 Pa·m³/s,
// NIST SP 811 B.8: 1 mbar = 100 Pa, 1 L = 1e-3 m³); in V = 30 L the isolated
// pressure then rises at Q/V = 6e-5/0.03 = 2e-3 Pa/s (REFERENCES.md §3,
// Q = V·dp/dt). The baked chamber's outgassing adds to it; the existing demo
// test allows ±20 % for that, and so does this one.
func TestDemoRiseWatchFitsOnlyTheIsolation(t *testing.T) {
	const leak = 6e-5 // Pa·m³/s
	start := time.Date(2026, 3, 1, 18, 0, 0, 0, time.UTC)
	closed := start.Add(3*time.Hour + 50*time.Minute)
	var raised *alerts.RiseResult
	var raisedAt time.Time
	seen := map[string]bool{}
	demoAlarmRun(t, 3*time.Hour+59*time.Minute, func(now time.Time, e *alerts.Engine, evs []alerts.Event) {
		r, ok := e.RiseResults()["chamber-leaking"]
		if !ok || now.Before(closed) {
			return // while pumped the watch sees the pressure settle at its new base: not this check
		}
		key := r.Reason
		if r.Classification == alerts.LeakDominated || r.Classification == alerts.Mixed {
			lo, hi := r.LeakRate-r.LeakRateExpanded, r.LeakRate+r.LeakRateExpanded
			if !seen[key] && (hi < 0.8*leak || lo > 1.2*leak) {
				t.Errorf("rise watch stated %.3g ± %.2g Pa·m³/s (k = 2, %s): misses the simulated %.3g by more than the outgassing's 20 %%",
					r.LeakRate, r.LeakRateExpanded, r.Classification, leak)
			}
			seen[key] = true
		}
		for _, ev := range evs {
			if ev.Alarm == "chamber-leaking" && ev.Kind == alerts.Raised && raised == nil {
				raised, raisedAt = &r, ev.At
			}
		}
	})
	if raised == nil {
		t.Fatal("the rise watch was never raised during the isolation")
	}
	t.Logf("raised %s after the valve closed: %s, Q = %.3g ± %.2g Pa·m³/s (k = 2); %v", raisedAt.Sub(closed),
		raised.Classification, raised.LeakRate, raised.LeakRateExpanded, raised.Notes)
	if raisedAt.Before(closed) {
		t.Errorf("raised at %s, before the valve closed", raisedAt)
	}
	if q := raised.LeakRate; q < 0.8*leak || q > 1.2*leak {
		t.Errorf("the raising analysis found Q = %.3g Pa·m³/s; want the simulated %.3g within 20 %%", q, leak)
	}
}
