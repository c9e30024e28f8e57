package sim

import (
	"context"
	"errors"
	"fmt"
	"hash/fnv"
	"math"
	"math/rand/v2"
	"slices"
	"strings"
	"sync"
	"time"

	"holdfast/calib"
	"holdfast/drivers"
)

// The instrument kinds.
const (
	KindPirani       = "pirani"       // thermal-conductivity gauge; raw = heat-loss signal
	KindCDG          = "cdg"          // capacitance diaphragm gauge; raw = output volts, 0–10 V over full scale
	KindIon          = "ion"          // ionisation gauge; raw = indicated pressure, Pa
	KindThermocouple = "thermocouple" // raw = °C of the wall or the room; with Probe, its EMF in mV
	KindRTD          = "rtd"          // resistance thermometer; raw = its resistance in Ω
)

// Kinds lists the known instrument kinds.
func Kinds() []string { return []string{KindPirani, KindCDG, KindIon, KindThermocouple, KindRTD} }

// defaultTimeout is how long a silent instrument makes Read wait, in wall
// time: long enough to be seen, short enough for a demo at high speed.
const defaultTimeout = 200 * time.Millisecond

// InstrumentConfig describes one simulated instrument on a chamber.
//
// Noise is one standard deviation of Gaussian noise, by kind: pirani, a
// fraction of the gas term of the signal (default 2e-3), on top of a
// floor worth 0.02 Pa at the default (scaled with an override); cdg, a fraction of full scale (default 1e-4); ion, a
// fraction of the reading (default 1e-2); thermocouple, kelvin (default 0.2).
type InstrumentConfig struct {
	Name      string         // unique on its chamber; used in errors and as the fail/recover target
	Kind      string         // one of Kinds()
	Digits    int            // significant digits the instrument prints; 0 means 3
	Noise     float64        // noise override; 0 means the kind's default (see below)
	FullScale float64        // cdg only, Pa; required
	HeatLoss  calib.HeatLoss // pirani only; zero means DefaultHeatLoss()
	Where     string         // thermocouple and rtd: "wall" (default) or "ambient"
	// Probe makes a temperature instrument report its sensor's raw signal:
	// a thermocouple type letter ("K") for the EMF in mV with the reference
	// junction at the room's temperature (the instrument's terminals), or
	// for an rtd the element, pt100 (default) or pt1000, for its resistance
	// in Ω. Empty, a thermocouple reports °C.
	Probe   string
	Protect float64       // ion only, Pa: emission switches off above this; 0 means 1e-1
	Timeout time.Duration // how long a silent instrument makes Read wait (wall time); 0 means 200 ms
}

// An Instrument reads one quantity of a Chamber the way a real instrument
// does. It implements drivers.Driver and is safe for concurrent use.
type Instrument struct {
	ch      *Chamber
	name    string
	kind    string
	digits  int
	timeout time.Duration
	sensor  sensor
	xfer    calib.Transfer
	probe   string // a temperature instrument's raw signal; see InstrumentConfig.Probe

	mu  sync.Mutex // guards rng
	rng *rand.Rand
}

var _ drivers.Driver = (*Instrument)(nil)

// Instrument adds an instrument reading ch. The error lists every problem in
// ic, each naming its field.
func (ch *Chamber) Instrument(ic InstrumentConfig) (*Instrument, error) {
	s, xfer, err := newSensor(ic)
	if err != nil {
		return nil, err
	}
	if ti, ok := xfer.(calib.ThermocoupleInput); ok {
		ti.ColdJunction = ch.cfg.AmbientC // the instrument's terminals sit in the room
		xfer = ti
	}
	ch.mu.Lock()
	defer ch.mu.Unlock()
	if slices.Contains(ch.names, ic.Name) {
		return nil, fmt.Errorf("name: an instrument named %q already reads this chamber", ic.Name)
	}
	ch.names = append(ch.names, ic.Name)
	h := fnv.New64a()
	h.Write([]byte(ic.Name))
	in := &Instrument{
		ch: ch, name: ic.Name, kind: ic.Kind, digits: ic.Digits, timeout: ic.Timeout,
		sensor: s, xfer: xfer, probe: ic.Probe,
		rng: rand.New(rand.NewPCG(uint64(ch.cfg.Seed), h.Sum64())),
	}
	if in.digits == 0 {
		in.digits = 3
	}
	if in.timeout == 0 {
		in.timeout = defaultTimeout
	}
	return in, nil
}

// Name returns the instrument's name.
func (in *Instrument) Name() string { return in.name }

// Kind returns the instrument's kind.
func (in *Instrument) Kind() string { return in.kind }

// Transfer returns the mapping from this instrument's raw value to SI units
// (Pa or °C): the heat-loss curve for a Pirani, the linear 0–10 V scale for a
// CDG, identity for the others. The daemon may apply it as the gauge's
// transfer when no calibration is active.
func (in *Instrument) Transfer() calib.Transfer { return in.xfer }

// Read returns the instrument's reading at the chamber's present time,
// rounded to the instrument's digits. A silent instrument waits until ctx is
// done or its timeout elapses, then fails with drivers.ErrNoReply; a faulty
// one answers with drivers.StatusSensorFault. Errors are *drivers.GaugeError.
func (in *Instrument) Read(ctx context.Context) (drivers.Reading, error) {
	if err := ctx.Err(); err != nil {
		return drivers.Reading{}, in.fail(err)
	}
	st, mode := in.ch.observe(in.name)
	switch mode {
	case ModeSilent:
		return drivers.Reading{}, in.silent(ctx)
	case ModeFault:
		return drivers.Reading{Status: drivers.StatusSensorFault, At: st.At}, nil
	}
	in.mu.Lock()
	raw, status := in.sensor.measure(st, in.rng)
	in.mu.Unlock()
	return drivers.Reading{Raw: roundDigits(raw, in.digits), Status: status, At: st.At}, nil
}

func (in *Instrument) silent(ctx context.Context) error {
	t := time.NewTimer(in.timeout)
	defer t.Stop()
	select {
	case <-ctx.Done():
		return in.fail(ctx.Err())
	case <-t.C:
		return in.fail(drivers.ErrNoReply)
	}
}

func (in *Instrument) fail(err error) error {
	return &drivers.GaugeError{Gauge: in.name, Op: "read", Err: err}
}

// Fail makes the instrument fail in mode ("silent" or "fault") until Recover.
func (in *Instrument) Fail(mode string) error {
	if !slices.Contains(Modes(), mode) {
		return fmt.Errorf("mode: unknown mode %q (known: %s)", mode, strings.Join(Modes(), ", "))
	}
	in.ch.mu.Lock()
	defer in.ch.mu.Unlock()
	in.ch.sync()
	in.ch.failures[in.name] = mode
	return nil
}

// Recover makes a failed instrument answer normally again.
func (in *Instrument) Recover() {
	in.ch.mu.Lock()
	defer in.ch.mu.Unlock()
	in.ch.sync()
	delete(in.ch.failures, in.name)
}

// newSensor checks ic, reporting every problem, and builds its model.
func newSensor(ic InstrumentConfig) (sensor, calib.Transfer, error) {
	var v checker
	v.expect(ic.Name != "", "name", "must not be empty")
	v.expect(ic.Digits >= 0 && ic.Digits <= 17, "digits", "must be between 1 and 17 (0 means 3), got %d", ic.Digits)
	v.expect(ic.Noise >= 0 && !math.IsInf(ic.Noise, 1), "noise", "must be a finite value ≥ 0 (0 means the kind's default), got %g", ic.Noise)
	v.expect(ic.Timeout >= 0, "timeout", "must not be negative, got %s", ic.Timeout)
	only := func(set bool, field, kind string) {
		v.expect(!set || ic.Kind == kind, field, "only %s instruments take %s (this one is %q)", kind, field, ic.Kind)
	}
	only(ic.FullScale != 0, "full_scale", KindCDG)
	only(ic.HeatLoss != (calib.HeatLoss{}), "heat_loss", KindPirani)
	v.expect(ic.Where == "" || ic.Kind == KindThermocouple || ic.Kind == KindRTD, "where", "only thermocouple and rtd instruments take where (this one is %q)", ic.Kind)
	v.expect(ic.Probe == "" || ic.Kind == KindThermocouple || ic.Kind == KindRTD, "probe", "only thermocouple and rtd instruments take probe (this one is %q)", ic.Kind)
	only(ic.Protect != 0, "protect", KindIon)
	var s sensor
	var xfer calib.Transfer = calib.Identity{}
	switch ic.Kind {
	case KindPirani:
		s, xfer = newPirani(ic, &v)
	case KindCDG:
		s, xfer = newCDG(ic, &v)
	case KindIon:
		s = newIon(ic, &v)
	case KindThermocouple, KindRTD:
		s, xfer = newThermocouple(ic, &v)
	default:
		v.expect(false, "kind", "unknown instrument kind %q (known: %s)", ic.Kind, strings.Join(Kinds(), ", "))
	}
	if err := errors.Join(v.errs...); err != nil {
		return nil, nil, err
	}
	return s, xfer, nil
}

// Release frees name for a new instrument: a daemon that reloads its
// config builds a changed gauge's instrument again on the same chamber.
// The released instrument keeps reading the chamber until dropped.
func (ch *Chamber) Release(name string) {
	ch.mu.Lock()
	defer ch.mu.Unlock()
	ch.names = slices.DeleteFunc(ch.names, func(n string) bool { return n == name })
}
