package alerts

import (
	"math"
	"slices"
	"sync"
	"time"

	"gonum.org/v1/gonum/stat"

	"holdfast/calib"
)

// A BakePhase is where a bake stands, read from its temperatures against
// its plan.
type BakePhase string

// The phases of a bake. A tracker is idle between bakes; a bake's record
// goes ramp → hold → cool → done (cool → hold again if the heat comes
// back, ramp → cool if it goes off before the hold is reached).
const (
	BakeIdle BakePhase = "idle"
	BakeRamp BakePhase = "ramp"
	BakeHold BakePhase = "hold"
	BakeCool BakePhase = "cool"
	BakeDone BakePhase = "done"
)

// A BakePlan is one chamber's bake, in SI units (°C, °C/s, Pa). A zero
// RampUp, CoolDown, MaxTemperature or MaxPressure sets no such limit.
type BakePlan struct {
	Temperatures []string // the temperature gauges watched; the hottest leads the phases
	Pressure     string   // the pressure gauge judged and summarised; "" for none
	// OnRamp starts a bake when the hottest temperature has risen
	// StartRise above its resting level (the lowest seen while idle);
	// otherwise only Begin starts one.
	OnRamp    bool
	StartRise float64

	RampUp, CoolDown float64 // largest heating and cooling rates allowed, °C/s (both positive)
	Hold, Tolerance  float64 // the hold temperature and how far from it counts as at temperature
	HoldFor          time.Duration
	CoolTo           float64 // the bake is done once the hottest temperature is at or below this
	MaxTemperature   float64
	MaxPressure      float64
	// RateWindow is the span of the least-squares line a rate is the
	// slope of; a rate is known once the window holds half its span.
	RateWindow time.Duration
}

// A BakeStep is one change of phase (or the hold time being reached:
// Phase hold with HoldComplete set in the record).
type BakeStep struct {
	Phase BakePhase
	At    time.Time
}

// A BakeRecord is one bake, as far as it has gone; when Phase is done it
// is the bake's summary. Temperatures in °C, pressures in Pa, rates in
// °C/s; NaN where nothing was seen.
type BakeRecord struct {
	Phase       BakePhase
	Start, End  time.Time // End zero while the bake runs
	Steps       []BakeStep
	StartedBy   string  // "temperature" (the ramp was seen) or "request"
	StartTemp   float64 // the resting temperature the ramp began from
	MaxTemp     float64
	MaxGauge    string
	MaxAt       time.Time
	AtTemp      time.Duration // time every watched gauge was within Tolerance of Hold
	HoldDone    time.Time     // when AtTemp reached the plan's HoldFor; zero: not (yet)
	PressBefore float64       // last pressure while the chamber still rested, before the ramp
	PressAfter  float64       // last pressure when the bake was done
	PressMax    float64       // highest pressure during the bake
	MaxHeating  float64       // steepest heating rate seen during the bake, °C/s
	MaxCooling  float64       // steepest cooling rate seen during the bake, °C/s (positive)
}

// Running reports whether the record is of a bake still in progress.
func (r BakeRecord) Running() bool {
	return r.Phase == BakeRamp || r.Phase == BakeHold || r.Phase == BakeCool
}

// A Bake follows one chamber's bake plan over the samples of its gauges.
// It is safe for concurrent use: pollers call Observe, the alarm rules
// read its conditions, the API reads Snapshot. Every time comes from the
// samples (or Begin's caller), never from a clock of its own.
type Bake struct {
	mu    sync.Mutex
	plan  BakePlan
	phase BakePhase
	rec   BakeRecord

	last      map[string]calib.Sample // newest ok sample of each watched temperature
	win       map[string]*slopeWindow
	prevAt    time.Time // the previous temperature sample, any gauge: the at-temperature clock
	prevIn    bool      // whether every gauge was within tolerance as of prevAt
	rest      float64   // resting level while idle (NaN: none yet)
	preP      float64   // last pressure while resting
	pressure  calib.Sample
	havePress bool
	heat      float64 // current steepest heating slope, °C/s (NaN unknown)
	cool      float64 // current steepest cooling slope, °C/s, positive (NaN unknown)
}

// NewBake returns an idle tracker for plan.
func NewBake(plan BakePlan) *Bake {
	b := &Bake{plan: plan, phase: BakeIdle, last: map[string]calib.Sample{}, win: map[string]*slopeWindow{},
		rest: math.NaN(), preP: math.NaN(), heat: math.NaN(), cool: math.NaN()}
	for _, g := range plan.Temperatures {
		b.win[g] = &slopeWindow{span: plan.RateWindow}
	}
	return b
}

// Plan returns the plan the tracker follows.
func (b *Bake) Plan() BakePlan { return b.plan }

// Resume takes up a bake that was running when the daemon stopped: its
// record goes on from where it was stored. A record that is not running
// is ignored.
func (b *Bake) Resume(r BakeRecord) {
	if !r.Running() {
		return
	}
	b.mu.Lock()
	defer b.mu.Unlock()
	b.rec, b.phase = r, r.Phase
	b.rec.Steps = slices.Clone(r.Steps)
}

// Begin asks for a bake to start now, whatever the temperatures say
// (start: api). It reports false when a bake is already running.
func (b *Bake) Begin(now time.Time) bool {
	b.mu.Lock()
	defer b.mu.Unlock()
	if b.phase != BakeIdle {
		return false
	}
	b.start(now, "request")
	return true
}

// Snapshot returns the current bake's record (the last one, done, when
// the tracker is idle after a bake; Phase idle before the first).
func (b *Bake) Snapshot() BakeRecord {
	b.mu.Lock()
	defer b.mu.Unlock()
	r := b.rec
	if r.Phase == "" {
		r.Phase = BakeIdle
	}
	r.Steps = slices.Clone(r.Steps)
	return r
}

// Observe takes one sample of a watched gauge and returns the steps it
// caused, with the record as it stands after them. A bake that is done is
// in the returned record with Phase done; the tracker is idle again.
func (b *Bake) Observe(gauge string, s calib.Sample) ([]BakeStep, BakeRecord) {
	b.mu.Lock()
	defer b.mu.Unlock()
	n := len(b.rec.Steps)
	wasDone := !b.rec.HoldDone.IsZero()
	if gauge == b.plan.Pressure {
		b.observePressure(s)
	}
	if b.win[gauge] != nil && s.Quality == calib.QualityOK && !math.IsNaN(s.Value) {
		b.observeTemperature(gauge, s)
	}
	var steps []BakeStep
	if n < len(b.rec.Steps) {
		steps = slices.Clone(b.rec.Steps[n:])
	}
	if !wasDone && !b.rec.HoldDone.IsZero() {
		steps = append(steps, BakeStep{Phase: BakeHold, At: b.rec.HoldDone})
	}
	r := b.rec
	r.Steps = slices.Clone(r.Steps)
	return steps, r
}

func (b *Bake) observePressure(s calib.Sample) {
	b.pressure, b.havePress = s, true
	if s.Quality != calib.QualityOK {
		return
	}
	switch {
	case b.phase == BakeIdle:
		if lead, _ := b.lead(s.At); !math.IsNaN(lead) && !math.IsNaN(b.rest) && lead <= b.rest+b.plan.StartRise/4 {
			b.preP = s.Value
		}
	case b.rec.Running():
		if !(s.Value <= b.rec.PressMax) {
			b.rec.PressMax = s.Value
		}
	}
}

func (b *Bake) observeTemperature(gauge string, s calib.Sample) {
	// Time at temperature accumulates over the interval since the
	// previous temperature sample, judged as things stood then; an
	// interval longer than the rate window is a gap and does not count.
	if b.rec.Running() && b.prevIn && !b.prevAt.IsZero() {
		if dt := s.At.Sub(b.prevAt); dt > 0 && dt <= b.plan.RateWindow {
			b.rec.AtTemp += dt
			if b.rec.HoldDone.IsZero() && b.rec.AtTemp >= b.plan.HoldFor {
				b.rec.HoldDone = s.At
			}
		}
	}
	b.last[gauge] = s
	b.win[gauge].add(s.At, s.Value)
	if s.At.After(b.prevAt) {
		b.prevAt = s.At
	}
	b.heat, b.cool = b.rates(s.At)
	lead, who := b.lead(s.At)
	b.prevIn = b.allWithin(s.At)
	if b.rec.Running() {
		b.extremes(s, lead, who)
	}
	b.advance(s.At, lead)
}

// extremes keeps the bake's highest temperature and steepest rates.
func (b *Bake) extremes(s calib.Sample, lead float64, who string) {
	if !(lead <= b.rec.MaxTemp) {
		b.rec.MaxTemp, b.rec.MaxGauge, b.rec.MaxAt = lead, who, s.At
	}
	if !(b.heat <= b.rec.MaxHeating) && b.heat > 0 {
		b.rec.MaxHeating = b.heat
	}
	if !(b.cool <= b.rec.MaxCooling) && b.cool > 0 {
		b.rec.MaxCooling = b.cool
	}
}

// advance moves the phase on from the lead temperature at t.
func (b *Bake) advance(t time.Time, lead float64) {
	p := b.plan
	low := p.Hold - p.Tolerance
	switch b.phase {
	case BakeIdle:
		if math.IsNaN(b.rest) || lead < b.rest {
			b.rest = lead
		}
		if p.OnRamp && lead >= b.rest+p.StartRise {
			b.start(t, "temperature")
			b.advance(t, lead) // a ramp seen late may already be at the hold
		}
	case BakeRamp:
		switch {
		case lead >= low:
			b.step(BakeHold, t)
		case lead < b.rec.MaxTemp-p.Tolerance:
			b.step(BakeCool, t) // the heat went off before the hold was reached
		}
	case BakeHold:
		// Half the tolerance of hysteresis, so that a reading's noise at
		// the edge does not flip hold and cool back and forth.
		if lead < low-p.Tolerance/2 {
			b.step(BakeCool, t)
		}
	case BakeCool:
		switch {
		case lead >= low:
			b.step(BakeHold, t)
		case lead <= p.CoolTo:
			b.step(BakeDone, t)
			b.rec.End = t
			b.rec.PressAfter = math.NaN()
			if b.havePress && b.pressure.Quality == calib.QualityOK {
				b.rec.PressAfter = b.pressure.Value
			}
			b.phase, b.rest, b.preP = BakeIdle, lead, math.NaN()
		}
	}
}

// start opens a new record at t; the caller holds mu.
func (b *Bake) start(t time.Time, by string) {
	b.rec = BakeRecord{Phase: BakeRamp, Start: t, StartedBy: by, StartTemp: b.rest, MaxTemp: math.NaN(),
		PressBefore: b.preP, PressAfter: math.NaN(), PressMax: math.NaN(), MaxHeating: math.NaN(), MaxCooling: math.NaN()}
	if by == "request" && b.havePress && b.pressure.Quality == calib.QualityOK {
		b.rec.PressBefore = b.pressure.Value
	}
	if lead, who := b.lead(t); !math.IsNaN(lead) {
		if by == "request" {
			b.rec.StartTemp = lead
		}
		b.rec.MaxTemp, b.rec.MaxGauge, b.rec.MaxAt = lead, who, t
	}
	if b.havePress && b.pressure.Quality == calib.QualityOK {
		b.rec.PressMax = b.pressure.Value
	}
	b.rec.Steps = []BakeStep{{Phase: BakeRamp, At: t}}
	b.phase = BakeRamp
}

func (b *Bake) step(p BakePhase, t time.Time) {
	b.phase, b.rec.Phase = p, p
	b.rec.Steps = append(b.rec.Steps, BakeStep{Phase: p, At: t})
}

// fresh reports whether a gauge's last sample still speaks for now: no
// older than the rate window.
func (b *Bake) fresh(s calib.Sample, now time.Time) bool {
	return !s.At.IsZero() && now.Sub(s.At) <= b.plan.RateWindow
}

// lead is the hottest fresh temperature and its gauge; NaN when none.
func (b *Bake) lead(now time.Time) (float64, string) {
	best, who := math.NaN(), ""
	for _, g := range b.plan.Temperatures {
		if s, ok := b.last[g]; ok && b.fresh(s, now) && !(s.Value <= best) {
			best, who = s.Value, g
		}
	}
	return best, who
}

// allWithin reports whether every watched gauge reads fresh and within
// the tolerance of the hold temperature.
func (b *Bake) allWithin(now time.Time) bool {
	for _, g := range b.plan.Temperatures {
		s, ok := b.last[g]
		if !ok || !b.fresh(s, now) || math.Abs(s.Value-b.plan.Hold) > b.plan.Tolerance {
			return false
		}
	}
	return true
}

// rates are the steepest heating and cooling slopes over the gauges
// whose windows are full enough; NaN when none is.
func (b *Bake) rates(now time.Time) (heat, cool float64) {
	heat, cool = math.NaN(), math.NaN()
	for _, g := range b.plan.Temperatures {
		if !b.fresh(b.last[g], now) {
			continue
		}
		k, ok := b.win[g].slope()
		if !ok {
			continue
		}
		if !(k <= heat) {
			heat = k
		}
		if !(-k <= cool) {
			cool = -k
		}
	}
	return heat, cool
}

// A slopeWindow keeps the samples of the last span for a least-squares
// slope, so that single noisy readings do not decide a rate.
type slopeWindow struct {
	span time.Duration
	t0   time.Time
	t, v []float64
}

func (w *slopeWindow) add(at time.Time, v float64) {
	if w.t0.IsZero() {
		w.t0 = at
	}
	x := at.Sub(w.t0).Seconds()
	if n := len(w.t); n > 0 && x <= w.t[n-1] {
		return // out of order or repeated: the window keeps time order
	}
	w.t, w.v = append(w.t, x), append(w.v, v)
	cut := 0
	for cut < len(w.t) && w.t[cut] < x-w.span.Seconds() {
		cut++
	}
	if cut > 0 {
		w.t, w.v = append(w.t[:0], w.t[cut:]...), append(w.v[:0], w.v[cut:]...)
	}
}

// slope is the least-squares slope in units per second, known once the
// window holds at least three samples over half its span.
func (w *slopeWindow) slope() (float64, bool) {
	if len(w.t) < 3 || w.t[len(w.t)-1]-w.t[0] < w.span.Seconds()/2 {
		return 0, false
	}
	_, k := stat.LinearRegression(w.t, w.v, nil, false)
	return k, true
}
