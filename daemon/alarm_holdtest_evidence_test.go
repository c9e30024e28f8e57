package daemon

import (
	"errors"
	"math"
	"strings"
	"testing"

	"holdfast/alerts"
)

// The README's first hold test: the capacitance gauge went over-range 16 s
// into a 300 s record. Hand figures: 16 in-range samples at 1 s spacing
// span 15.5 s (0.25 s to 15.75 s), under 0.9 × 300 = 270 s, and 284 samples
// read over-range. The record must end inconclusive, saying so and how much
// was recorded, whatever the fit of those 16 samples called it.
func TestHoldEvidenceOverRangeIsInconclusive(t *testing.T) {
	first := 16.25
	ev := HoldEvidenceJSON{RequestedSeconds: 300, RecordedSeconds: 15.5, InRange: 16, OutOfRange: 284,
		FirstOutOfRangeS: &first, OutOfRangeStatus: "over-range", LongestGapS: 284.25}
	ev.Problems = ev.judge()
	if len(ev.Problems) != 2 {
		t.Fatalf("problems %q; want the range left and the short record", ev.Problems)
	}
	res := alerts.RiseResult{Classification: alerts.LeakDominated, Reason: "a straight line fits", LeakRate: 5.6e-4}
	applyEvidence(&res, ev)
	if res.Classification != alerts.Inconclusive || !strings.Contains(res.Reason, "over-range") ||
		!strings.Contains(res.Reason, "15.5 s of the 300 s") {
		t.Errorf("result %s: %q; want inconclusive naming the over-range and the 15.5 s of 300 s recorded", res.Classification, res.Reason)
	}
	h := &HoldTestJSON{Unit: "mbar*L/s"}
	if v, _, q := holdVerdict(h, res); v != "inconclusive" || !math.IsNaN(q) {
		t.Errorf("verdict %q with leak rate %g for the alarm; want inconclusive and NaN", v, q)
	}
	full := HoldEvidenceJSON{RequestedSeconds: 300, RecordedSeconds: 299, InRange: 300, LongestGapS: 1}
	if p := full.judge(); len(p) != 0 {
		t.Errorf("a full in-range record: problems %q; want none", p)
	}
}

// Verdicts use the k = 2 interval against the allowed leak (guard bands,
// JCGM 106:2012 §8): allowed 1e-7 Pa·m³/s; 5e-8 ± 1e-8 lies wholly below
// (6e-8 ≤ 1e-7): pass; 2e-7 ± 5e-8 wholly above (1.5e-7 > 1e-7): fail;
// 9e-8 ± 2e-8 spans 7e-8 to 1.1e-7, across the limit: inconclusive. An
// upper bound of 5e-8 passes; one of 2e-7 shows nothing.
func TestHoldVerdictUsesTheInterval(t *testing.T) {
	allowed := 1e-7
	h := &HoldTestJSON{Unit: "Pa*m3/s", AllowedLeak: &allowed}
	for _, c := range []struct {
		q, u, ub float64
		bound    bool
		want     string
	}{
		{5e-8, 1e-8, 0, false, "pass"},
		{2e-7, 5e-8, 0, false, "fail"},
		{9e-8, 2e-8, 0, false, "inconclusive"},
		{1e-9, 1e-9, 5e-8, true, "pass"},
		{1e-9, 1e-9, 2e-7, true, "inconclusive"},
	} {
		class := alerts.LeakDominated
		if c.bound {
			class = alerts.OutgassingDominated
		}
		res := alerts.RiseResult{Classification: class, LeakRate: c.q, LeakRateExpanded: c.u, CoverageFactor: 2,
			LeakUpperBound: c.ub, UpperBoundOnly: c.bound}
		v, summary, _ := holdVerdict(h, res)
		if v != c.want {
			t.Errorf("Q %g ± %g (bound %g, %v): verdict %q (%s), want %s", c.q, c.u, c.ub, c.bound, v, summary, c.want)
		}
		if c.bound && !strings.Contains(summary, "at most") {
			t.Errorf("upper bound summary %q; want it to say \"at most\"", summary)
		}
	}
}

// A start while the pressure falls faster than 10 % over the test's
// duration is refused with the measured dp/dt; --force starts it and keeps
// the warning. Hand figures: 5 min test, limit 10 %/5 min = 2 %/min; a fall
// of −6.8 %/min is beyond it.
func TestHoldStartRefusedWhileFalling(t *testing.T) {
	tr := HoldTrendJSON{WindowSeconds: 60, Samples: 60, RatePaPerS: -1.17e-5, PercentPerMin: -6.8, LimitPercentPerMin: 2,
		Refusal: "chamber-cdg is still falling: dp/dt = -1.17e-05 Pa/s"}
	if _, err := startCheck(tr, false); !errors.Is(err, errHoldRefused) || !strings.Contains(err.Error(), "-1.17e-05 Pa/s") ||
		!strings.Contains(err.Error(), "--force") {
		t.Errorf("unforced: err %v; want a refusal with the dp/dt and the way to force it", err)
	}
	got, err := startCheck(tr, true)
	if err != nil || !got.Forced || !strings.Contains(got.Warning, "still falling") {
		t.Errorf("forced: %+v, %v; want started, forced, with the warning kept", got, err)
	}
	if got := 100 * holdDrift / 5.0; got != 2 {
		t.Errorf("limit for a 5 min test %g %%/min, want 2", got)
	}
}
