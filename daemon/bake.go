package daemon

import (
	"encoding/json"
	"fmt"
	"log/slog"
	"math"
	"sync"
	"time"

	"holdfast/alerts"
	"holdfast/calib"
	"holdfast/daemon/alarmstore"
	"holdfast/daemon/config"
	"holdfast/daemon/report"
)

// baker is the daemon's side of the bake plan: it feeds the tracker, keeps
// the record of the running bake in the store and says what happened.
type baker struct {
	t     *alerts.Bake
	punit calib.Unit
	mu    sync.Mutex // serialises the record's writes
	id    string     // the running (or last) bake's id
	once  sync.Once  // resumes a bake the last run left running
}

// BakeJSON is one bake in /api/v1/bakes and in the store. Temperatures
// are °C, pressures Pa, rates °C/min; absent where nothing was seen.
type BakeJSON struct {
	ID             string            `json:"id"`
	Chamber        string            `json:"chamber"`
	Phase          string            `json:"phase"` // ramp, hold, cool, done
	Start          time.Time         `json:"start"`
	End            time.Time         `json:"end,omitzero"`
	ElapsedSeconds float64           `json:"elapsed_s"`
	StartedBy      string            `json:"started_by"`
	Steps          []BakeStepJSON    `json:"steps"`
	HoldC          float64           `json:"hold_c"`
	ToleranceC     float64           `json:"tolerance_c"`
	HoldForSeconds float64           `json:"hold_for_s"`
	StartC         *float64          `json:"start_c,omitempty"`
	MaxC           *float64          `json:"max_c,omitempty"`
	MaxGauge       string            `json:"max_gauge,omitempty"`
	MaxAt          time.Time         `json:"max_at,omitzero"`
	AtTempSeconds  float64           `json:"at_temperature_s"`
	HoldComplete   time.Time         `json:"hold_complete,omitzero"`
	PressBeforePa  *float64          `json:"pressure_before_pa,omitempty"`
	PressAfterPa   *float64          `json:"pressure_after_pa,omitempty"`
	PressMaxPa     *float64          `json:"pressure_max_pa,omitempty"`
	HeatingCMin    *float64          `json:"max_heating_c_per_min,omitempty"`
	CoolingCMin    *float64          `json:"max_cooling_c_per_min,omitempty"`
	HoldTest       *BakeHoldTestJSON `json:"hold_test,omitempty"` // the last hold test finished when the bake was done
	Verdict        string            `json:"verdict,omitempty"`   // done bakes: complete (the hold time was reached) or short
	Unit           string            `json:"unit"`                // pressure unit for people
}

// BakeStepJSON is one change of phase.
type BakeStepJSON struct {
	Phase string    `json:"phase"`
	At    time.Time `json:"at"`
}

// BakeHoldTestJSON is the hold test a bake's summary names.
type BakeHoldTestJSON struct {
	ID      string    `json:"id"`
	At      time.Time `json:"at"` // end of its recording
	Verdict string    `json:"verdict,omitempty"`
	Summary string    `json:"summary,omitempty"`
}

// bakeAlarms builds the tracker for the bake plan and the alarms it adds.
func (d *Daemon) bakeAlarms() []*alerts.Alarm {
	b := d.conf().Bake
	if b == nil {
		return nil
	}
	plan := alerts.BakePlan{Temperatures: b.Temperatures, Pressure: b.Pressure, OnRamp: b.Start == "on_ramp",
		StartRise: b.Resolved.StartRise, RampUp: b.Resolved.RampUp, CoolDown: b.Resolved.CoolDown, Hold: float64(b.Hold), Tolerance: b.Resolved.Tolerance,
		HoldFor: b.HoldFor.D(), CoolTo: float64(b.CoolTo), MaxTemperature: float64(b.MaxTemperature),
		MaxPressure: float64(b.MaxPressure), RateWindow: b.RateWindow.D()}
	d.bake = &baker{t: alerts.NewBake(plan), punit: d.gaugeUnit(b.Pressure)}
	if b.Pressure == "" {
		d.bake.punit = calib.Pressure.Base()
	}
	tunit := d.gaugeUnit(b.Temperatures[0])
	lead := b.Temperatures[0]
	mk := func(c alerts.BakeCheck, sev string, db float64, u calib.Unit, gauge string, on time.Duration) *alerts.Alarm {
		return &alerts.Alarm{Name: config.BakeAlarmNames[string(c)], Gauge: gauge, Severity: alerts.Severity(sev), OnDelay: on,
			Rule: &alerts.BakeRule{Bake: d.bake.t, Check: c, Deadband: db, Unit: u}}
	}
	rdb := func(limit float64) float64 {
		if b.Resolved.HasDeadband {
			return b.Resolved.RateDeadband
		}
		return limit / 10
	}
	out := []*alerts.Alarm{
		mk(alerts.BakeOverTemperature, "critical", 2, tunit, lead, 0), // 2 °C back below the maximum to clear (common practice)
		mk(alerts.BakeHeatingFast, b.Severity, rdb(b.Resolved.RampUp), tunit, lead, 0),
		mk(alerts.BakeCoolingFast, b.Severity, rdb(b.Resolved.CoolDown), tunit, lead, 0),
	}
	if b.MaxPressure > 0 {
		out = append(out, mk(alerts.BakePressureHigh, b.Severity, float64(b.MaxPressure)/10, d.bake.punit, b.Pressure, time.Minute))
	}
	return out
}

// bakeObserve feeds one sample to the bake tracker before the alarms see it.
func (d *Daemon) bakeObserve(log *slog.Logger, gauge string, s calib.Sample) {
	bk := d.bake
	if bk == nil {
		return
	}
	bk.once.Do(func() { d.resumeBake(log) })
	steps, rec := bk.t.Observe(gauge, s)
	if len(steps) > 0 {
		d.bakeSteps(log, steps, rec)
	}
}

// resumeBake takes up the bake the last run left running, if any.
func (d *Daemon) resumeBake(log *slog.Logger) {
	bs, err := storedBakes(alarmstore.Wrap(d.store.Bolt()))
	if err != nil {
		log.Warn("stored bakes unreadable; a bake left running is not resumed", "err", err)
	}
	if len(bs) == 0 {
		return
	}
	last := bs[len(bs)-1]
	d.bake.id = last.ID
	if r := last.record(); r.Running() {
		d.bake.t.Resume(r)
		log.Info("bake resumed", "bake", last.ID, "phase", last.Phase)
	}
}

// bakeSteps stores the record after a change of phase and tells people.
func (d *Daemon) bakeSteps(log *slog.Logger, steps []alerts.BakeStep, rec alerts.BakeRecord) {
	bk := d.bake
	bk.mu.Lock()
	defer bk.mu.Unlock()
	st := alarmstore.Wrap(d.store.Bolt())
	for _, step := range steps {
		if step.Phase == alerts.BakeRamp {
			id, err := st.NewBakeID()
			if err != nil {
				log.Error("bake not recorded", "err", err)
			}
			bk.id = id
		}
		msg := "bake " + string(step.Phase)
		switch {
		case step.Phase == alerts.BakeHold && step.At.Equal(rec.HoldDone):
			msg = fmt.Sprintf("bake hold time of %s reached", d.conf().Bake.HoldFor.D())
		case step.Phase == alerts.BakeDone:
			msg = "bake done"
		}
		log.Info(msg, "bake", bk.id, "phase", string(step.Phase))
		d.emit(Event{At: step.At, Kind: "bake-" + string(step.Phase), Message: msg + " (bake " + bk.id + ")"})
	}
	j := d.bakeJSON(bk.id, rec, rec.End)
	if rec.Phase == alerts.BakeDone {
		j.HoldTest = lastHoldTest(st, rec.End)
		log.Info("bake summary", "bake", bk.id, "verdict", j.Verdict, "max_celsius", rec.MaxTemp,
			"at_temperature_seconds", rec.AtTemp.Seconds(), "pressure_before_pa", rec.PressBefore, "pressure_after_pa", rec.PressAfter)
	}
	b, err := json.Marshal(j)
	if err == nil && bk.id != "" {
		err = st.PutBake(bk.id, b)
	}
	if err != nil {
		log.Error("bake record not stored", "bake", bk.id, "err", err)
	}
}

// lastHoldTest is the newest hold test finished by t.
func lastHoldTest(st *alarmstore.Store, t time.Time) *BakeHoldTestJSON {
	hs, _ := storedHoldTests(st, 20)
	for i := len(hs) - 1; i >= 0; i-- {
		h := hs[i]
		if h.State == holdDone && !h.RecordTo.After(t) {
			return &BakeHoldTestJSON{ID: h.ID, At: h.RecordTo, Verdict: h.Verdict, Summary: h.Summary}
		}
	}
	return nil
}

// bakeJSON turns a tracker record into its stored and served form; now
// counts the elapsed time of a running bake.
func (d *Daemon) bakeJSON(id string, r alerts.BakeRecord, now time.Time) BakeJSON {
	b := d.conf().Bake
	j := BakeJSON{ID: id, Chamber: d.conf().Chamber.Name, Phase: string(r.Phase), Start: r.Start, End: r.End, StartedBy: r.StartedBy,
		HoldC: float64(b.Hold), ToleranceC: b.Resolved.Tolerance, HoldForSeconds: b.HoldFor.D().Seconds(),
		StartC: num(r.StartTemp), MaxC: num(r.MaxTemp), MaxGauge: r.MaxGauge, MaxAt: r.MaxAt, AtTempSeconds: r.AtTemp.Seconds(),
		HoldComplete: r.HoldDone, PressBeforePa: num(r.PressBefore), PressAfterPa: num(r.PressAfter), PressMaxPa: num(r.PressMax),
		HeatingCMin: num(r.MaxHeating * 60), CoolingCMin: num(r.MaxCooling * 60), Unit: d.bake.punit.Name}
	for _, s := range r.Steps {
		j.Steps = append(j.Steps, BakeStepJSON{Phase: string(s.Phase), At: s.At})
	}
	end := r.End
	if end.IsZero() {
		end = now
	}
	if !end.IsZero() && end.After(r.Start) {
		j.ElapsedSeconds = end.Sub(r.Start).Seconds()
	}
	if r.Phase == alerts.BakeDone {
		j.Verdict = "short"
		if !r.HoldDone.IsZero() {
			j.Verdict = "complete"
		}
	}
	return j
}

// record is the tracker's form of a stored bake, for resuming it.
func (j BakeJSON) record() alerts.BakeRecord {
	r := alerts.BakeRecord{Phase: alerts.BakePhase(j.Phase), Start: j.Start, End: j.End, StartedBy: j.StartedBy,
		StartTemp: val(j.StartC), MaxTemp: val(j.MaxC), MaxGauge: j.MaxGauge, MaxAt: j.MaxAt,
		AtTemp: time.Duration(j.AtTempSeconds * float64(time.Second)), HoldDone: j.HoldComplete,
		PressBefore: val(j.PressBeforePa), PressAfter: val(j.PressAfterPa), PressMax: val(j.PressMaxPa),
		MaxHeating: val(j.HeatingCMin) / 60, MaxCooling: val(j.CoolingCMin) / 60}
	for _, s := range j.Steps {
		r.Steps = append(r.Steps, alerts.BakeStep{Phase: alerts.BakePhase(s.Phase), At: s.At})
	}
	return r
}

func num(v float64) *float64 {
	if math.IsNaN(v) || math.IsInf(v, 0) {
		return nil
	}
	return &v
}

func val(p *float64) float64 {
	if p == nil {
		return math.NaN()
	}
	return *p
}

// storedBakes returns every stored bake, oldest first.
func storedBakes(st *alarmstore.Store) ([]BakeJSON, error) {
	raw, err := st.Bakes()
	var out []BakeJSON
	for _, b := range raw {
		var j BakeJSON
		if jerr := json.Unmarshal(b, &j); jerr != nil {
			return out, fmt.Errorf("a stored bake record is unreadable: %w", jerr)
		}
		out = append(out, j)
	}
	return out, err
}

// Bakes returns the stored bakes, oldest first, with the running one as
// it stands now.
func (d *Daemon) Bakes() ([]BakeJSON, error) {
	bs, err := storedBakes(alarmstore.Wrap(d.store.Bolt()))
	if d.bake == nil || len(bs) == 0 {
		return bs, err
	}
	d.bake.mu.Lock()
	id := d.bake.id
	d.bake.mu.Unlock()
	if last := &bs[len(bs)-1]; last.ID == id {
		if r := d.bake.t.Snapshot(); r.Running() {
			*last = d.bakeJSON(id, r, d.clock.Now())
		}
	}
	return bs, err
}

// reportBakes turns the stored bakes that overlap from–to into the
// report's: phases as spans, and the summary.
func reportBakes(bs []BakeJSON, from, to time.Time) []report.Bake {
	var out []report.Bake
	for _, b := range bs {
		if !b.Start.Before(to) || !b.End.IsZero() && !b.End.After(from) {
			continue
		}
		r := report.Bake{ID: b.ID, Running: b.Phase != "done", Verdict: b.Verdict, MaxC: val(b.MaxC), HoldC: b.HoldC,
			AtTemp: time.Duration(b.AtTempSeconds * float64(time.Second)), HoldFor: time.Duration(b.HoldForSeconds * float64(time.Second)),
			PressBefore: val(b.PressBeforePa), PressAfter: val(b.PressAfterPa)}
		for i, s := range b.Steps {
			if s.Phase == "done" {
				break
			}
			sp := report.BakeSpan{Phase: s.Phase, From: s.At}
			if i+1 < len(b.Steps) {
				sp.To = b.Steps[i+1].At
			}
			if n := len(r.Phases); n > 0 && r.Phases[n-1].Phase == sp.Phase {
				r.Phases[n-1].To = sp.To // the hold time reached: the same phase goes on
				continue
			}
			r.Phases = append(r.Phases, sp)
		}
		if h := b.HoldTest; h != nil {
			r.HoldTest = h.ID + " " + h.Verdict + " " + h.Summary
		}
		if len(r.Phases) > 0 {
			out = append(out, r)
		}
	}
	return out
}
