package daemon

import (
	"context"
	"encoding/json"
	"fmt"
	"log/slog"
	"math"
	"time"

	"holdfast/alerts"
	"holdfast/calib"
	"holdfast/daemon/alarmstore"
	"holdfast/daemon/store"
)

// Hold-test states.
const (
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
	State           string    `json:"state"` // settling, recording, done, failed
	Requested       time.Time `json:"requested"`
	RecordFrom      time.Time `json:"record_from"`
	RecordTo        time.Time `json:"record_to"`
	SettleSeconds   float64   `json:"settle_s"`
	DurationSeconds float64   `json:"duration_s"`
	VolumeM3        float64   `json:"volume_m3"`
	// Valve says who isolates the chamber: "simulator" (the daemon closes
	// the simulated valve) or "manual" (a person, or the plant's own
	// controls, must close it at the start; holdfast drives no real valve).
	Valve       string             `json:"valve"`
	AllowedLeak *float64           `json:"allowed_leak_pa_m3_per_s,omitempty"`
	Verdict     string             `json:"verdict,omitempty"` // pass, fail, inconclusive
	Summary     string             `json:"summary,omitempty"`
	Result      *alerts.RiseResult `json:"result,omitempty"`
	Error       string             `json:"error,omitempty"`
	Unit        string             `json:"unit"`
}

// holdDefaults returns the hold-test alarm configured for gauge, if any.
func (d *Daemon) holdDefaults(gauge string) *HoldTestConfig {
	for _, a := range d.cfg.Alarms {
		if a.HoldTest != nil && a.Gauge == gauge {
			return a.HoldTest
		}
	}
	return nil
}

// startHoldTest stores a new hold test and isolates the chamber where the
// daemon can (the simulator); rise-watch alarms are told it is isolated.
func (d *Daemon) startHoldTest(gauge string, settle, dur time.Duration) (HoldTestJSON, error) {
	g := d.cfg.Gauges[gauge]
	if g == nil || g.Kind != "pressure" {
		return HoldTestJSON{}, fmt.Errorf("gauge %q: want a configured pressure gauge", gauge)
	}
	if d.runningHoldTest() != "" {
		return HoldTestJSON{}, fmt.Errorf("hold test %s is still running; wait for it to finish", d.runningHoldTest())
	}
	st := alarmstore.Wrap(d.store.Bolt())
	id, err := st.NewHoldTestID()
	if err != nil {
		return HoldTestJSON{}, err
	}
	now := d.clock.Now()
	h := HoldTestJSON{ID: id, Gauge: gauge, Chamber: d.cfg.Chamber.Name, State: holdSettling, Requested: now,
		RecordFrom: now.Add(settle), RecordTo: now.Add(settle + dur), SettleSeconds: settle.Seconds(),
		DurationSeconds: dur.Seconds(), VolumeM3: float64(d.cfg.Chamber.Volume), Valve: "manual", Unit: "mbar*L/s"}
	if hc := d.holdDefaults(gauge); hc != nil {
		h.AllowedLeak, h.Unit = finite(float64(hc.AllowedLeak)), hc.Unit
	}
	if d.simValve(gauge, true) {
		h.Valve = "simulator"
	}
	d.alarms.SetIsolated(true)
	return h, d.putHoldTest(st, h)
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
	st := alarmstore.Wrap(d.store.Bolt())
	ids, err := st.HoldTestIDs()
	if err != nil {
		return nil, err
	}
	if n > 0 && len(ids) > n {
		ids = ids[len(ids)-n:]
	}
	var out []HoldTestJSON
	for _, id := range ids {
		b, err := st.HoldTest(id, "report.json")
		if err != nil {
			continue // reserved but not written (a crash between the two): nothing to run or show
		}
		var h HoldTestJSON
		if err := json.Unmarshal(b, &h); err != nil {
			return out, fmt.Errorf("hold test %s: stored report unreadable: %w", id, err)
		}
		out = append(out, h)
	}
	return out, nil
}

func (d *Daemon) runningHoldTest() string {
	hs, _ := d.recentHoldTests(5)
	for _, h := range hs {
		if h.State == holdSettling || h.State == holdRecording {
			return h.ID
		}
	}
	return ""
}

// holdTests advances running hold tests at now: settle, record, analyse.
func (d *Daemon) holdTests(_ context.Context, log *slog.Logger, st *alarmstore.Store, now time.Time) {
	hs, err := d.recentHoldTests(5)
	if err != nil {
		log.Warn("hold tests unreadable", "err", err)
	}
	for _, h := range hs {
		switch {
		case h.State == holdSettling && !now.Before(h.RecordFrom):
			h.State = holdRecording
			log.Info("hold test recording", "id", h.ID, "gauge", h.Gauge)
		case h.State == holdRecording && !now.Before(h.RecordTo):
			d.finishHoldTest(log, &h, now)
		default:
			continue
		}
		if err := d.putHoldTest(st, h); err != nil {
			log.Error("hold test not stored", "id", h.ID, "err", err)
		}
	}
}

func (d *Daemon) finishHoldTest(log *slog.Logger, h *HoldTestJSON, now time.Time) {
	d.simValve(h.Gauge, false)
	d.alarms.SetIsolated(false)
	var ts, ps []float64
	err := d.store.Range(h.Gauge, h.RecordFrom, h.RecordTo, func(p store.Point) bool {
		if calib.Quality(p.Quality) == calib.QualityOK {
			ts, ps = append(ts, p.At.Sub(h.RecordFrom).Seconds()), append(ps, p.Value)
		}
		return true
	})
	res, aerr := alerts.AnalyzeRise(ts, ps, h.VolumeM3, alerts.RiseOptions{})
	if err == nil {
		err = aerr
	}
	if err != nil {
		h.State, h.Error, h.Verdict = holdFailed, err.Error(), "inconclusive"
		log.Warn("hold test failed", "id", h.ID, "gauge", h.Gauge, "err", err)
		d.holdResult(log, h.Gauge, math.NaN(), now)
		return
	}
	h.State, h.Result = holdDone, &res
	h.Verdict, h.Summary = holdVerdict(h, res)
	q := res.LeakRate
	if res.Classification == alerts.Inconclusive {
		q = math.NaN()
	}
	d.holdResult(log, h.Gauge, q, now)
	if svg, err := riseSVG(h, ts, ps, res); err != nil {
		log.Warn("hold test plot failed", "id", h.ID, "err", err)
	} else if err := alarmstore.Wrap(d.store.Bolt()).PutHoldTest(h.ID, "rise.svg", svg); err != nil {
		log.Error("hold test plot not stored", "id", h.ID, "err", err)
	}
	log.Info("hold test done", "id", h.ID, "gauge", h.Gauge, "verdict", h.Verdict, "leak_rate_pa_m3_per_s", res.LeakRate)
}

func holdVerdict(h *HoldTestJSON, res alerts.RiseResult) (string, string) {
	u, _ := calib.ParseUnit(h.Unit, calib.Throughput)
	q := calib.Format(res.LeakRate, u) + " ± " + calib.Format(res.LeakRateUncertainty, u)
	switch {
	case res.Classification == alerts.Inconclusive:
		return "inconclusive", "inconclusive: " + res.Reason
	case h.AllowedLeak == nil:
		return "", fmt.Sprintf("leak rate %s (%s); no allowed leak rate configured", q, res.Classification)
	case res.LeakRate > *h.AllowedLeak:
		return "fail", fmt.Sprintf("leak rate %s (%s) exceeds the allowed %s", q, res.Classification, calib.Format(*h.AllowedLeak, u))
	}
	return "pass", fmt.Sprintf("leak rate %s (%s) within the allowed %s", q, res.Classification, calib.Format(*h.AllowedLeak, u))
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
