package daemon

import (
	"context"
	"encoding/json"
	"errors"
	"fmt"
	"log/slog"
	"math"
	"strings"
	"time"

	"holdfast/alerts"
	"holdfast/calib"
	"holdfast/daemon/alarmstore"
	"holdfast/daemon/config"
)

// Hold-test states.
const (
	holdClosing   = "closing" // valve commanded closed; waiting for the confirm switch
	holdSettling  = "settling"
	holdRecording = "recording"
	holdDone      = "done"
	holdFailed    = "failed"
)

// HoldTestJSON is a hold test as stored (report.json) and served.
type HoldTestJSON struct {
	ID              string    `json:"id"`
	Gauge           string    `json:"gauge"`
	Chamber         string    `json:"chamber"`
	State           string    `json:"state"` // closing, settling, recording, done, failed
	Requested       time.Time `json:"requested"`
	RecordFrom      time.Time `json:"record_from"`
	RecordTo        time.Time `json:"record_to"`
	SettleSeconds   float64   `json:"settle_s"`
	DurationSeconds float64   `json:"duration_s"`
	VolumeM3        float64   `json:"volume_m3"`
	// Valve says who isolates the chamber: "modbus" (the daemon wrote the
	// configured coil, see ValveJSON), "simulator" (the daemon closes the
	// simulated valve) or "manual" (a person, or the plant's own controls,
	// must close it at the start).
	Valve       string             `json:"valve"`
	Coil        *ValveJSON         `json:"coil,omitempty"`
	Confirm     string             `json:"confirm,omitempty"` // the state gauge that says the chamber is isolated
	Scheduled   bool               `json:"scheduled,omitempty"`
	AllowedLeak *float64           `json:"allowed_leak_pa_m3_per_s,omitempty"`
	Verdict     string             `json:"verdict,omitempty"` // pass, fail, inconclusive
	Summary     string             `json:"summary,omitempty"`
	Result      *alerts.RiseResult `json:"result,omitempty"`
	Error       string             `json:"error,omitempty"`
	Unit        string             `json:"unit"`
	// StartCheck is the pressure trend measured when the test was asked
	// for; Evidence what the record held (coverage, range).
	StartCheck *HoldTrendJSON    `json:"start_check,omitempty"`
	Evidence   *HoldEvidenceJSON `json:"evidence,omitempty"`
	// Suppressed lists the alarms the test suppressed by design (IEC
	// 62682) for its isolation; StillSuppressed those not yet put back,
	// SuppressedUntil when they are put back at the latest.
	Suppressed      []string   `json:"suppressed_alarms,omitempty"`
	StillSuppressed []string   `json:"still_suppressed,omitempty"`
	SuppressedUntil *time.Time `json:"suppressed_until,omitempty"`
}

// holdDefaults returns the hold-test alarm configured for gauge, if any.
func (d *Daemon) holdDefaults(gauge string) *config.HoldTestConfig {
	for _, a := range d.conf().Alarms {
		if a.HoldTest != nil && a.Gauge == gauge {
			return a.HoldTest
		}
	}
	return nil
}

// startHoldTest starts a hold test asked for through the API.
func (d *Daemon) startHoldTest(gauge string, settle, dur time.Duration, force bool) (HoldTestJSON, error) {
	return d.beginHoldTest(gauge, settle, dur, false, force)
}

// beginHoldTest stores a new hold test and isolates the chamber where the
// daemon can (a configured valve, or the simulator); rise-watch alarms are
// told it is isolated. Only one hold test runs at a time, and with a
// confirm switch and no valve the test does not start while it reads open.
// Unless forced it does not start while the gauge is out of range or the
// pressure still falls fast (startCheck). The alarms the test provokes are
// suppressed by design until it is over.
func (d *Daemon) beginHoldTest(gauge string, settle, dur time.Duration, scheduled, force bool) (HoldTestJSON, error) {
	g := d.conf().Gauges[gauge]
	if g == nil || g.Kind != "pressure" {
		return HoldTestJSON{}, fmt.Errorf("gauge %q: want a configured pressure gauge", gauge)
	}
	if p := d.alarmsDown.Load(); p != nil {
		return HoldTestJSON{}, fmt.Errorf("alarms are not running (their stored state did not load: %v); no hold test can be judged", *p)
	}
	// Before the alarm loop has restored its state and ended the tests a
	// crash interrupted, a new test would race that clean-up: wait a little.
	select {
	case <-d.alarmsReady:
	case <-time.After(5 * time.Second):
		return HoldTestJSON{}, errors.New("the alarm engine is still starting; try again in a few seconds")
	}
	if id := d.alarms.RunningHoldTest(); id != "" {
		return HoldTestJSON{}, fmt.Errorf("hold test %s is still running; wait for it to finish", id)
	}
	trend, err := startCheck(d.holdTrend(gauge, settle, dur, d.clock.Now()), force)
	if err != nil {
		return HoldTestJSON{}, err
	}
	st := alarmstore.Wrap(d.store.Bolt())
	id, err := st.NewHoldTestID()
	if err != nil {
		return HoldTestJSON{}, err
	}
	if running, ok := d.alarms.ClaimHoldTest(id); !ok {
		return HoldTestJSON{}, fmt.Errorf("hold test %s is still running; wait for it to finish", running)
	}
	h := d.newHoldTest(id, gauge, settle, dur, scheduled)
	h.StartCheck = &trend
	h, err = d.isolateForHoldTest(h)
	if err == nil {
		err = d.putHoldTest(st, h)
	}
	if err != nil {
		d.putBackValve(d.log, &h)
		d.alarms.ReleaseHoldTest(id)
		return HoldTestJSON{}, err
	}
	// Within a poll of the valve moving, before the pressure can climb.
	if d.suppressForHoldTest(d.log, &h); len(h.Suppressed) > 0 {
		if err := d.putHoldTest(st, h); err != nil {
			d.log.Error("hold test not stored", "id", h.ID, "err", err)
		}
	}
	d.alarms.SetIsolated(true)
	return h, nil
}

func (d *Daemon) newHoldTest(id, gauge string, settle, dur time.Duration, scheduled bool) HoldTestJSON {
	now := d.clock.Now()
	h := HoldTestJSON{ID: id, Gauge: gauge, Chamber: d.conf().Chamber.Name, State: holdSettling, Requested: now,
		RecordFrom: now.Add(settle), RecordTo: now.Add(settle + dur), SettleSeconds: settle.Seconds(),
		DurationSeconds: dur.Seconds(), VolumeM3: float64(d.conf().Chamber.Volume), Valve: "manual", Unit: "mbar*L/s",
		Scheduled: scheduled}
	if hc := d.holdDefaults(gauge); hc != nil {
		h.AllowedLeak, h.Unit, h.Confirm = finite(float64(hc.AllowedLeak)), hc.Unit, hc.Confirm
	}
	return h
}

// isolateForHoldTest closes the configured valve (the test then waits for
// its confirm switch, if any), or checks that a person did (the confirm
// switch reads closed), or closes the simulator's valve.
func (d *Daemon) isolateForHoldTest(h HoldTestJSON) (HoldTestJSON, error) {
	hc := d.holdDefaults(h.Gauge)
	switch {
	case hc != nil && hc.Valve != nil:
		if err := d.closeValve(&h, hc.Valve); err != nil {
			return h, err
		}
		if h.Confirm != "" {
			h.State = holdClosing
		}
	case h.Confirm != "":
		if closed, why := d.isolatedBySwitch(h.Confirm); !closed {
			return h, fmt.Errorf("chamber not isolated: %s; close the isolation valve, then start the test", why)
		}
	case d.simValve(h.Gauge, true):
		h.Valve = "simulator"
	}
	return h, nil
}
func (d *Daemon) putHoldTest(st *alarmstore.Store, h HoldTestJSON) error {
	b, err := json.MarshalIndent(h, "", "  ")
	if err != nil {
		return err
	}
	return st.PutHoldTest(h.ID, "report.json", b)
}

// simValve closes (or opens) the simulated isolation valve of the link the
// gauge is on, and reports whether there was one.
func (d *Daemon) simValve(gauge string, closed bool) bool {
	for _, l := range d.links {
		for _, g := range l.gauges {
			if g.name == gauge && l.sim != nil {
				l.sim.Isolate(closed)
				return true
			}
		}
	}
	return false
}

// recentHoldTests returns the newest hold tests (at most n), oldest first.
func (d *Daemon) recentHoldTests(n int) ([]HoldTestJSON, error) {
	return storedHoldTests(alarmstore.Wrap(d.store.Bolt()), n)
}

// holdTests advances running hold tests at now: wait for the valve, settle,
// record, analyse.
func (d *Daemon) holdTests(_ context.Context, log *slog.Logger, st *alarmstore.Store, now time.Time) {
	hs, err := d.recentHoldTests(5)
	if err != nil {
		log.Warn("hold tests unreadable", "err", err)
	}
	for _, h := range hs {
		if !holdRunning(h.State) {
			if d.liftHoldSuppression(log, &h, now) {
				if err := d.putHoldTest(st, h); err != nil {
					log.Error("hold test not stored", "id", h.ID, "err", err)
				}
			}
			continue
		}
		if !d.advanceHoldTest(log, &h, now) {
			continue
		}
		if err := d.putHoldTest(st, h); err != nil {
			log.Error("hold test not stored", "id", h.ID, "err", err)
		}
	}
}

func holdRunning(state string) bool {
	return state == holdClosing || state == holdSettling || state == holdRecording
}

// advanceHoldTest moves h on at now and reports whether it changed.
func (d *Daemon) advanceHoldTest(log *slog.Logger, h *HoldTestJSON, now time.Time) bool {
	sw, why := switchUnknown, ""
	if h.Confirm != "" {
		sw, why = d.switchState(h.Confirm)
	}
	switch {
	case h.State == holdClosing && sw == switchClosed:
		settle, dur := time.Duration(h.SettleSeconds*float64(time.Second)), time.Duration(h.DurationSeconds*float64(time.Second))
		h.State, h.RecordFrom, h.RecordTo = holdSettling, now.Add(settle), now.Add(settle+dur)
		log.Info("hold test valve confirmed closed", "id", h.ID, "gauge", h.Gauge, "switch", h.Confirm)
	case h.State == holdClosing && !now.Before(h.Requested.Add(d.valveTravel(h.Gauge))):
		d.failHoldTest(log, h, now, fmt.Sprintf("valve not closed: %s after the coil was written, %s", d.valveTravel(h.Gauge), why))
	case h.State != holdClosing && sw == switchOpen:
		d.failHoldTest(log, h, now, fmt.Sprintf("isolation lost during the test: %s", why))
	case h.State == holdSettling && !now.Before(h.RecordFrom):
		h.State = holdRecording
		log.Info("hold test recording", "id", h.ID, "gauge", h.Gauge)
	case h.State == holdRecording && !now.Before(h.RecordTo):
		d.finishHoldTest(log, h, now)
	default:
		return false
	}
	return true
}

// failHoldTest ends h without a result: the valve is put back and the
// hold-test alarm is told the test was inconclusive.
func (d *Daemon) failHoldTest(log *slog.Logger, h *HoldTestJSON, now time.Time, reason string) {
	d.endIsolation(log, h, now)
	h.State, h.Error, h.Verdict = holdFailed, reason, "inconclusive"
	if h.Coil != nil && h.Coil.Error != "" {
		h.Error += "; " + h.Coil.Error
	}
	log.Warn("hold test failed", "id", h.ID, "gauge", h.Gauge, "err", reason)
	d.holdResult(log, h.Gauge, math.NaN(), now)
}

// endIsolation undoes what the test did to isolate the chamber and frees
// the hold-test claim; the alarms it suppressed are put back as they clear.
func (d *Daemon) endIsolation(log *slog.Logger, h *HoldTestJSON, now time.Time) {
	d.putBackValve(log, h)
	if h.Valve == "simulator" {
		d.simValve(h.Gauge, false)
	}
	d.alarms.SetIsolated(false)
	d.alarms.ReleaseHoldTest(h.ID)
	endSuppression(h, now)
}

func (d *Daemon) finishHoldTest(log *slog.Logger, h *HoldTestJSON, now time.Time) {
	d.endIsolation(log, h, now)
	ts, ps, ev, err := d.holdRecord(h)
	if c := h.StartCheck; c != nil && c.Forced && h.Scheduled {
		// Nobody chose to run it anyway: its result is not a finding.
		ev.Problems = append(ev.Problems, "the scheduled test started although "+c.Refusal)
	}
	h.Evidence = &ev
	opt, uNote := d.riseUncertainties(h.Gauge, ps)
	res, aerr := alerts.AnalyzeRise(ts, ps, h.VolumeM3, opt)
	if err == nil {
		err = aerr
	}
	if aerr == nil && res.Classification != alerts.Inconclusive {
		res.Notes = append(res.Notes, uNote)
	}
	if err != nil && len(ev.Problems) > 0 {
		err = fmt.Errorf("%s (%w)", strings.Join(ev.Problems, "; "), err)
	}
	if err != nil {
		d.failHoldTest(log, h, now, err.Error())
		return
	}
	applyEvidence(&res, ev)
	h.State, h.Result = holdDone, &res
	var q float64
	h.Verdict, h.Summary, q = holdVerdict(h, res)
	if h.StartCheck != nil && h.StartCheck.Forced {
		h.Summary += "; warning: " + h.StartCheck.Warning
	}
	if h.Coil != nil && h.Coil.Error != "" {
		h.Error = h.Coil.Error
	}
	d.holdResult(log, h.Gauge, q, now)
	if svg, err := riseSVG(h, ts, ps, res); err != nil {
		log.Warn("hold test plot failed", "id", h.ID, "err", err)
	} else if err := alarmstore.Wrap(d.store.Bolt()).PutHoldTest(h.ID, "rise.svg", svg); err != nil {
		log.Error("hold test plot not stored", "id", h.ID, "err", err)
	}
	log.Info("hold test done", "id", h.ID, "gauge", h.Gauge, "verdict", h.Verdict, "leak_rate_pa_m3_per_s", res.LeakRate)
}

// holdVerdict judges a result against the allowed leak rate with its
// uncertainty, as conformity is judged with guard bands (JCGM 106:2012,
// §8: accept when the interval lies within the limit, reject when it lies
// beyond it): pass when Q + U ≤ allowed, fail when Q − U > allowed,
// inconclusive in between. An upper bound passes when it is within the
// limit and decides nothing otherwise. It returns the verdict, the summary
// and the leak rate for the hold-test alarm (NaN: nothing decided).
func holdVerdict(h *HoldTestJSON, res alerts.RiseResult) (string, string, float64) {
	u, _ := calib.ParseUnit(h.Unit, calib.Throughput)
	f := func(v float64) string { return calib.Format(v, u) }
	q, U := res.LeakRate, res.LeakRateExpanded
	found := fmt.Sprintf("leak rate %s ± %s (k = %g, %s)", f(q), f(U), res.CoverageFactor, res.Classification)
	if res.UpperBoundOnly {
		q, U = res.LeakUpperBound, 0
		found = fmt.Sprintf("leak rate at most %s (upper bound: %s)", f(q), res.Reason)
	}
	switch {
	case res.Classification == alerts.Inconclusive:
		return "inconclusive", "inconclusive: " + res.Reason, math.NaN()
	case h.AllowedLeak == nil:
		return "", found + "; no allowed leak rate configured", q
	case q+U <= *h.AllowedLeak:
		return "pass", found + " within the allowed " + f(*h.AllowedLeak), q
	case !res.UpperBoundOnly && q-U > *h.AllowedLeak:
		return "fail", found + " exceeds the allowed " + f(*h.AllowedLeak), q
	case res.UpperBoundOnly:
		return "inconclusive", found + " does not show the leak within the allowed " + f(*h.AllowedLeak) +
			": outgassing dominates; pump or bake longer and test again", math.NaN()
	}
	return "inconclusive", found + ": the allowed " + f(*h.AllowedLeak) + " lies within the interval; record longer", math.NaN()
}

// holdResult hands a finished test's leak rate to the hold-test alarms.
func (d *Daemon) holdResult(log *slog.Logger, gauge string, q float64, now time.Time) {
	s := calib.Sample{At: now, Value: q, Quality: calib.QualityOK}
	if math.IsNaN(q) {
		s.Quality = calib.QualitySensorFault
	}
	for _, ev := range d.alarms.Observe(alerts.HoldTestGauge(gauge), s) {
		d.alarmEvent(log, ev)
	}
}
