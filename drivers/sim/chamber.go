package sim

import (
	"cmp"
	"fmt"
	"math"
	"slices"
	"sync"
	"time"
)

// A Chamber is one simulated vacuum chamber. It advances lazily: every call
// first integrates up to the time its clock gives, never backward, so a
// request for an earlier time than the last sees the current state. A
// Chamber is safe for concurrent use.
type Chamber struct {
	mu       sync.Mutex
	now      func() time.Time
	start    time.Time
	elapsed  time.Duration // simulated time integrated so far
	cfg      Config
	pm       pumping // the stages as configured
	stopped  pumping // no stages: valve closed or pumps off
	events   []Event // sorted by After
	next     int     // first event not yet applied
	tau, exp float64 // wall lag (s), outgassing exponent

	p        float64 // Pa
	wallC    float64 // °C
	heaterC  float64 // setpoint; at or below ambient means off
	age      float64 // outgassing clock (s), runs faster on a hot wall
	leak     float64 // Pa·m³/s
	bleed    float64 // Pa·m³/s
	isolated bool
	pumpsOff bool
	failures map[string]string // instrument name → mode
	names    []string          // instruments created so far
	substeps int64             // integration sub-steps taken, for benchmarks
}

// State is a snapshot of the chamber at one simulated instant.
type State struct {
	At         time.Time
	Elapsed    time.Duration // since the start
	Pressure   float64       // Pa
	WallC      float64       // °C
	AmbientC   float64       // °C
	HeaterC    float64       // bake setpoint, °C; at or below AmbientC the heater is off
	Isolated   bool          // isolation valve closed
	PumpsOn    bool
	Leak       float64 // Pa·m³/s, the real leak
	Bleed      float64 // Pa·m³/s through the bleed valve
	Outgassing float64 // Pa·m³/s from the walls now
	PumpSpeed  float64 // m³/s, the effective speed S(p) acting on the chamber now (0 when isolated)
}

// New builds a chamber from c, starting at now(). Events at offset 0 take
// effect at once. The error lists every problem in c (see Config.Validate).
func New(c Config, now func() time.Time) (*Chamber, error) {
	if err := c.Validate(); err != nil {
		return nil, err
	}
	if now == nil {
		return nil, fmt.Errorf("sim: New needs a clock (now func), got nil")
	}
	ch := &Chamber{
		now:      now,
		start:    now(),
		cfg:      c,
		pm:       newPumping(c.Rough, c.High, c.Crossover),
		stopped:  newPumping(Pump{}, Pump{}, 0),
		events:   slices.Clone(c.Events),
		tau:      c.WallTau.Seconds(),
		exp:      c.OutgassingExp,
		p:        c.StartPressure,
		wallC:    c.AmbientC,
		heaterC:  c.AmbientC,
		leak:     c.Leak,
		bleed:    c.Bleed,
		isolated: c.Isolated,
		pumpsOff: c.PumpsOff,
		failures: map[string]string{},
	}
	if ch.p == 0 {
		ch.p = Atmosphere
	}
	if ch.tau == 0 {
		ch.tau = defaultWallTau
	}
	if ch.exp == 0 {
		ch.exp = 1
	}
	slices.SortStableFunc(ch.events, func(a, b Event) int { return cmp.Compare(a.After, b.After) })
	ch.advanceTo(0)
	return ch, nil
}

// State advances the chamber to now() and returns its state.
func (ch *Chamber) State() State {
	ch.mu.Lock()
	defer ch.mu.Unlock()
	ch.sync()
	return ch.snapshot()
}

// observe is State plus the failure mode of one instrument, read together.
func (ch *Chamber) observe(name string) (State, string) {
	ch.mu.Lock()
	defer ch.mu.Unlock()
	ch.sync()
	return ch.snapshot(), ch.failures[name]
}

func (ch *Chamber) snapshot() State {
	active := ch.active()
	f := thermalFactor(ch.wallC, ch.cfg.AmbientC)
	return State{
		At:         ch.start.Add(ch.elapsed),
		Elapsed:    ch.elapsed,
		Pressure:   ch.p,
		WallC:      ch.wallC,
		AmbientC:   ch.cfg.AmbientC,
		HeaterC:    ch.heaterC,
		Isolated:   ch.isolated,
		PumpsOn:    !ch.pumpsOff,
		Leak:       ch.leak,
		Bleed:      ch.bleed,
		Outgassing: outgassingRate(ch.cfg.Outgassing, ch.exp, f, ch.age),
		PumpSpeed:  active.speed(ch.p),
	}
}

// sync integrates up to the clock's present, if it has moved forward.
func (ch *Chamber) sync() {
	if d := ch.now().Sub(ch.start); d > ch.elapsed {
		ch.advanceTo(d)
	}
}

// active is the pumping acting on the chamber: none when sealed or stopped.
func (ch *Chamber) active() *pumping {
	if ch.isolated || ch.pumpsOff {
		return &ch.stopped
	}
	return &ch.pm
}

// advanceTo integrates to offset to, applying each event at its own time.
func (ch *Chamber) advanceTo(to time.Duration) {
	for ch.next < len(ch.events) && ch.events[ch.next].After <= to {
		e := ch.events[ch.next]
		ch.integrate(e.After)
		ch.apply(e)
		ch.next++
	}
	ch.integrate(to)
}

// integrate advances the gas balance and the wall temperature to offset to
// in sub-steps short enough that the outgassing load changes by at most
// stepTolerance within each; within a sub-step the load is taken as linear
// in time and the pressure step is exact for it.
func (ch *Chamber) integrate(to time.Duration) {
	if to <= ch.elapsed {
		return
	}
	pm := ch.active()
	target := math.Max(ch.heaterC, ch.cfg.AmbientC)
	amb, q1h, vol := ch.cfg.AmbientC, ch.cfg.Outgassing, ch.cfg.Volume
	for rest := (to - ch.elapsed).Seconds(); rest > 0; {
		h := min(rest, ch.maxStep(target))
		rest -= h
		fMid := thermalFactor(wallAfter(ch.wallC, target, ch.tau, h/2), amb)
		wallEnd := wallAfter(ch.wallC, target, ch.tau, h)
		ageEnd := ch.age + fMid*h
		q0 := outgassingRate(q1h, ch.exp, thermalFactor(ch.wallC, amb), ch.age)
		q1 := outgassingRate(q1h, ch.exp, thermalFactor(wallEnd, amb), ageEnd)
		ch.p = pm.step(ch.p, ch.leak+ch.bleed+q0, (q1-q0)/h, vol, h)
		ch.age, ch.wallC = ageEnd, wallEnd
		ch.substeps++
	}
	ch.elapsed = to
}

// maxStep is the longest sub-step (s) over which the outgassing load changes
// by about stepTolerance, from the wall warming or cooling and from the
// load's own decay; +Inf when there is no outgassing.
func (ch *Chamber) maxStep(target float64) float64 {
	if ch.cfg.Outgassing == 0 {
		return math.Inf(1)
	}
	f := thermalFactor(ch.wallC, ch.cfg.AmbientC)
	rate := math.Ln2/outgassingDoublingK*math.Abs(target-ch.wallC)/ch.tau +
		ch.exp*f/math.Max(ch.age, outgassingMinAge)
	return stepTolerance / rate
}

// apply carries out one event; Validate has checked its fields.
func (ch *Chamber) apply(e Event) {
	switch e.Action {
	case ActIsolate:
		ch.isolated = true
	case ActReopen:
		ch.isolated = false
	case ActLeak:
		ch.leak = e.Value
	case ActBleed:
		ch.bleed = e.Value
	case ActBake:
		ch.heaterC = e.Value
	case ActPumpOff:
		ch.pumpsOff = true
	case ActPumpOn:
		ch.pumpsOff = false
	case ActVent:
		ch.vent(e.Value)
	case ActFail:
		ch.failures[e.Target] = e.Mode
	case ActRecover:
		delete(ch.failures, e.Target)
	}
}

func (ch *Chamber) vent(p float64) {
	if p == 0 {
		p = Atmosphere
	}
	ch.p = p
	ch.age = 0 // fresh gas on the walls: outgassing starts over
}
