package daemon

import (
	"errors"
	"fmt"
	"log/slog"
	"strings"
	"time"

	"holdfast/alerts"
	"holdfast/calib"
	"holdfast/daemon/store"
)

// What a hold test must show before its result is believed.
const (
	// holdCoverage: the in-range record must span at least 90 % of the
	// duration asked for, with no gap longer than 10 % of it (common
	// practice: a missed poll at either end is fine, a lost minute is not).
	holdCoverage = 0.9
	holdMaxGap   = 0.1
	// holdDrift: before the test the pressure may fall by at most 10 % of
	// its value over the test's duration. A pressure still falling faster
	// is a chamber still pumping down, whose outgassing changes by more
	// than that during the record (for an outgassing-limited fall p ∝ 1/t
	// the relative fall rate −ṗ/p = 1/t is the outgassing's own relative
	// decay rate), and 10 % is the classification's own resolution
	// (alerts.OutgassingShareMax). The limit in %/min is 10 % over the
	// duration in minutes: 2 %/min for a 5 min test.
	holdDrift = 0.10
	// holdTrendMin: the trend window is the settle time, at least a minute.
	holdTrendMin = time.Minute
)

// HoldEvidenceJSON is what a finished hold test's record held: whether it
// covers the duration asked for with the gauge in range.
type HoldEvidenceJSON struct {
	RequestedSeconds float64 `json:"requested_s"`
	RecordedSeconds  float64 `json:"recorded_s"` // from the first to the last in-range sample
	LongestGapS      float64 `json:"longest_gap_s"`
	InRange          int     `json:"in_range_samples"`
	OutOfRange       int     `json:"out_of_range_samples"` // over- or under-range
	OtherInvalid     int     `json:"invalid_samples"`      // sensor fault, off
	// FirstOutOfRangeS is when the gauge first left its range, in seconds
	// since recording began, with what it read (over-range, under-range).
	FirstOutOfRangeS *float64 `json:"first_out_of_range_s,omitempty"`
	OutOfRangeStatus string   `json:"out_of_range_status,omitempty"`
	// Problems say why the record cannot be judged; empty when it can.
	Problems []string `json:"problems"`
}

// HoldTrendJSON is the gauge's pressure trend measured when a hold test was
// asked for.
type HoldTrendJSON struct {
	WindowSeconds float64 `json:"window_s"`
	Samples       int     `json:"samples"`
	// RatePaPerS is dp/dt of a least-squares line over the window;
	// PercentPerMin is that rate relative to the mean pressure, and
	// LimitPercentPerMin the fall beyond which the test is refused.
	RatePaPerS         float64 `json:"dp_dt_pa_per_s"`
	PercentPerMin      float64 `json:"percent_per_min"`
	LimitPercentPerMin float64 `json:"limit_percent_per_min"`
	LastQuality        string  `json:"last_quality,omitempty"`
	// Refusal says why the test should not start ("" when it may);
	// Forced says it was started anyway (--force); Warning is kept in
	// the report either way.
	Refusal string `json:"refusal,omitempty"`
	Forced  bool   `json:"forced,omitempty"`
	Warning string `json:"warning,omitempty"`
}

// errHoldRefused marks a hold test refused by its start check.
var errHoldRefused = errors.New("hold test refused")

// holdTrend measures the pressure trend of gauge over the window before now.
func (d *Daemon) holdTrend(gauge string, settle, dur time.Duration, now time.Time) HoldTrendJSON {
	w := max(settle, holdTrendMin)
	tr := HoldTrendJSON{WindowSeconds: w.Seconds(), LimitPercentPerMin: 100 * holdDrift / dur.Minutes()}
	var ts, ps []float64
	last := calib.QualityOK
	seen := false
	_ = d.store.Range(gauge, now.Add(-w), now.Add(time.Nanosecond), func(p store.Point) bool {
		last, seen = calib.Quality(p.Quality), true
		if last == calib.QualityOK {
			ts, ps = append(ts, p.At.Sub(now).Seconds()), append(ps, p.Value)
		}
		return true
	})
	return trendOf(tr, gauge, ts, ps, last, seen, w, dur)
}

// trendOf judges the trend from the window's in-range samples (ts, ps)
// and the quality of its newest sample, if any was seen.
func trendOf(tr HoldTrendJSON, gauge string, ts, ps []float64, last calib.Quality, seen bool, w, dur time.Duration) HoldTrendJSON {
	tr.Samples = len(ts)
	if seen {
		tr.LastQuality = last.String()
	}
	if seen && (last == calib.QualityOverRange || last == calib.QualityUnderRange) {
		tr.Refusal = fmt.Sprintf("%s reads %s now: a hold test needs the gauge within its range", gauge, last)
		return tr
	}
	if len(ts) < 5 || ts[len(ts)-1]-ts[0] < w.Seconds()/2 {
		tr.Warning = fmt.Sprintf("pressure trend unknown: %d in-range samples in the last %s", len(ts), w)
		return tr
	}
	slope, mean := lineSlope(ts, ps)
	tr.RatePaPerS = slope
	if mean > 0 {
		tr.PercentPerMin = 100 * 60 * slope / mean
	}
	if tr.PercentPerMin < -tr.LimitPercentPerMin {
		tr.Refusal = fmt.Sprintf("%s is still falling: dp/dt = %.3g Pa/s (%.2g %%/min over the last %s; a %s test "+
			"needs a fall under %.2g %%/min, so that outgassing changes by under %.0f %% during it)", gauge,
			slope, tr.PercentPerMin, w, dur, tr.LimitPercentPerMin, 100*holdDrift)
	}
	return tr
}

// lineSlope returns the least-squares slope of p against t and p's mean.
func lineSlope(t, p []float64) (slope, mean float64) {
	n := float64(len(t))
	var mt, mp float64
	for i := range t {
		mt, mp = mt+t[i]/n, mp+p[i]/n
	}
	var sxy, sxx float64
	for i := range t {
		sxy += (t[i] - mt) * (p[i] - mp)
		sxx += (t[i] - mt) * (t[i] - mt)
	}
	if sxx == 0 {
		return 0, mp
	}
	return sxy / sxx, mp
}

// startCheck refuses a hold test while the gauge is out of range or the
// pressure still falls fast, unless forced; a forced start keeps the
// refusal in the report as a warning.
func startCheck(tr HoldTrendJSON, force bool) (HoldTrendJSON, error) {
	if tr.Refusal == "" {
		return tr, nil
	}
	if !force {
		return tr, fmt.Errorf("%w: %s; wait for the pump-down to level off, or start with --force "+
			"(the report then carries this warning)", errHoldRefused, tr.Refusal)
	}
	tr.Forced = true
	tr.Warning = strings.TrimPrefix(tr.Warning+"; ", "; ") + "started with --force although " + tr.Refusal
	return tr, nil
}

// holdRecord reads the record window: the in-range samples (seconds since
// recording began, Pa) and what the record shows about its own coverage.
func (d *Daemon) holdRecord(h *HoldTestJSON) (ts, ps []float64, ev HoldEvidenceJSON, err error) {
	ev = HoldEvidenceJSON{RequestedSeconds: h.DurationSeconds, Problems: []string{}}
	err = d.store.Range(h.Gauge, h.RecordFrom, h.RecordTo, func(p store.Point) bool {
		at := p.At.Sub(h.RecordFrom).Seconds()
		switch q := calib.Quality(p.Quality); q {
		case calib.QualityOK:
			if len(ts) > 0 {
				ev.LongestGapS = max(ev.LongestGapS, at-ts[len(ts)-1])
			}
			ts, ps = append(ts, at), append(ps, p.Value)
		case calib.QualityOverRange, calib.QualityUnderRange:
			if ev.OutOfRange == 0 {
				ev.FirstOutOfRangeS, ev.OutOfRangeStatus = &at, q.String()
			}
			ev.OutOfRange++
		default:
			ev.OtherInvalid++
		}
		return true
	})
	ev.InRange = len(ts)
	if len(ts) > 0 {
		ev.RecordedSeconds = ts[len(ts)-1] - ts[0]
		ev.LongestGapS = max(ev.LongestGapS, ts[0], h.DurationSeconds-ts[len(ts)-1])
	} else {
		ev.LongestGapS = h.DurationSeconds
	}
	ev.Problems = ev.judge()
	return ts, ps, ev, err
}

func (ev HoldEvidenceJSON) judge() []string {
	out := []string{}
	if ev.OutOfRange > 0 {
		out = append(out, fmt.Sprintf("the gauge left its valid range: it read %s from %.3g s into the record (%d samples)",
			ev.OutOfRangeStatus, *ev.FirstOutOfRangeS, ev.OutOfRange))
	}
	if ev.RecordedSeconds < holdCoverage*ev.RequestedSeconds || ev.LongestGapS > holdMaxGap*ev.RequestedSeconds {
		out = append(out, fmt.Sprintf("the in-range record spans %.3g s of the %.3g s asked for (%d samples, longest gap %.3g s)",
			ev.RecordedSeconds, ev.RequestedSeconds, ev.InRange, ev.LongestGapS))
	}
	return out
}

// applyEvidence makes a result inconclusive when its record cannot carry
// it, keeping the fit of what was recorded for the plot and the reader.
func applyEvidence(res *alerts.RiseResult, ev HoldEvidenceJSON) {
	if len(ev.Problems) == 0 {
		return
	}
	if res.Classification != alerts.Inconclusive {
		res.Notes = append(res.Notes, fmt.Sprintf("the fit of the part recorded called it %s (%s); not a finding, see the reason",
			res.Classification, res.Reason))
	}
	res.Classification, res.UpperBoundOnly = alerts.Inconclusive, false
	res.Reason = strings.Join(ev.Problems, "; ")
}

// suppressForHoldTest suppresses, by design (IEC 62682), the alarms the
// hold test knowingly provokes, and lists them in h.
func (d *Daemon) suppressForHoldTest(log *slog.Logger, h *HoldTestJSON) {
	for _, name := range d.alarms.HoldTestProvoked(h.Gauge) {
		ev, err := d.alarms.Suppress(alerts.Action{Alarm: name, By: "hold test " + h.ID, At: d.clock.Now(),
			Reason: "suppressed by design: hold test " + h.ID + " isolates the chamber on purpose"}, true)
		if err != nil && !errors.Is(err, alerts.ErrNotStored) {
			log.Warn("alarm not suppressed for the hold test", "alarm", name, "id", h.ID, "err", err)
			continue
		}
		h.Suppressed, h.StillSuppressed = append(h.Suppressed, name), append(h.StillSuppressed, name)
		if err == nil {
			d.alarmEvent(log, ev) // else the alarm loop does once it is stored
		}
	}
}

// liftHoldSuppression puts back the alarms a finished hold test
// suppressed: each once its condition has cleared (the chamber pumped
// again), all at h.SuppressedUntil at the latest. It reports whether h
// changed.
func (d *Daemon) liftHoldSuppression(log *slog.Logger, h *HoldTestJSON, now time.Time) bool {
	if holdRunning(h.State) || len(h.StillSuppressed) == 0 {
		return false
	}
	due := h.SuppressedUntil == nil || !now.Before(*h.SuppressedUntil)
	keep := h.StillSuppressed[:0:0]
	for _, name := range h.StillSuppressed {
		if !due && d.alarms.AlarmActive(name) {
			keep = append(keep, name)
			continue
		}
		ev, err := d.alarms.Suppress(alerts.Action{Alarm: name, By: "hold test " + h.ID, At: now,
			Reason: "hold test " + h.ID + " ended"}, false)
		if err == nil {
			d.alarmEvent(log, ev)
		} else if !errors.Is(err, alerts.ErrNoChange) && !errors.Is(err, alerts.ErrNotStored) && !errors.Is(err, alerts.ErrUnknownAlarm) {
			log.Warn("alarm suppression not lifted; retrying", "alarm", name, "id", h.ID, "err", err)
			keep = append(keep, name)
		}
	}
	changed := len(keep) != len(h.StillSuppressed)
	h.StillSuppressed = keep
	if len(keep) == 0 {
		h.StillSuppressed = nil
	}
	return changed
}

// endSuppression sets when a hold test's suppression ends at the latest:
// once the chamber is pumped again its provoked alarms clear; as a bound,
// as long again as the test isolated it.
func endSuppression(h *HoldTestJSON, now time.Time) {
	if len(h.StillSuppressed) == 0 {
		return
	}
	until := now.Add(time.Duration((h.SettleSeconds + h.DurationSeconds) * float64(time.Second)))
	h.SuppressedUntil = &until
}
