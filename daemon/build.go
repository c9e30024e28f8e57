package daemon

import (
	"errors"
	"fmt"
	"slices"
	"time"

	"holdfast/calib"
	"holdfast/daemon/config"
	"holdfast/drivers"
	"holdfast/drivers/sim"
)

// buildGauges opens every link's drivers and gives each gauge its transfer.
func (d *Daemon) buildGauges() error {
	var errs []error
	byLink := map[string]*link{}
	for _, name := range sortedKeys(d.conf().Links) {
		l, err := d.buildLink(name, d.conf().Links[name])
		if err != nil {
			errs = append(errs, fmt.Errorf("link %s: %w", name, err))
			continue
		}
		byLink[name] = l
	}
	for _, name := range sortedKeys(d.conf().Gauges) {
		gc := d.conf().Gauges[name]
		if len(gc.Combine) > 0 {
			continue // virtual: built by buildCombined
		}
		l := byLink[gc.Link]
		if l == nil {
			continue // its link failed; already reported
		}
		g, err := d.buildGauge(name, gc, l)
		if err != nil {
			errs = append(errs, fmt.Errorf("gauge %s: %w", name, err))
			continue
		}
		l.gauges = append(l.gauges, g)
		d.gauges = append(d.gauges, g)
	}
	if err := d.buildCombined(); err != nil {
		errs = append(errs, err)
	}
	if err := d.wireAmbient(); err != nil {
		errs = append(errs, err)
	}
	if err := d.wireCorrections(); err != nil {
		errs = append(errs, err)
	}
	for _, name := range sortedKeys(byLink) {
		l := byLink[name]
		if err := linkFeeds(l); err != nil {
			errs = append(errs, err)
		}
		if len(l.gauges) > 0 || len(errs) > 0 {
			d.links = append(d.links, l) // on error, so that New closes it
		} else if l.close != nil && d.reuse[name] == nil { // a reload closes a kept link once it is unused
			errs = append(errs, l.close())
		}
	}
	return errors.Join(errs...)
}

func (d *Daemon) buildLink(name string, lc *config.LinkConfig) (*link, error) {
	if l := d.reuseLink(name); l != nil {
		return l, nil // a reload keeps the running connection
	}
	l := &link{name: name}
	switch {
	case lc.Simulator != nil:
		ch, err := sim.New(simConfig(d.conf(), lc.Simulator), d.clock.Now)
		if err != nil {
			return nil, err
		}
		l.sim = ch
	case lc.Serial != nil:
		sc := lc.Serial.Driver(name)
		sc.Identify = lc.Identify.Driver()
		sl, err := drivers.OpenSerial(sc, d.log)
		if err != nil {
			return nil, err
		}
		l.stream, l.close, l.stats = sl, sl.Close, sl.Stats
	case lc.TCP != nil:
		tc := lc.TCP.Driver(name)
		tc.Identify = lc.Identify.Driver()
		tl, err := drivers.DialTCP(tc, d.log)
		if err != nil {
			return nil, err
		}
		l.stream, l.close, l.stats = tl, tl.Close, tl.Stats
	case lc.IsModbus():
		mc := drivers.ModbusConfig{Name: name}
		if lc.ModbusRTU != nil {
			sc := lc.ModbusRTU.Driver(name)
			mc.RTU = &sc
		} else {
			tc := lc.ModbusTCP.Driver(name)
			mc.TCP = &tc
		}
		ml, err := drivers.OpenModbus(mc, d.log)
		if err != nil {
			return nil, err
		}
		l.modbus, l.close, l.stats = ml, ml.Close, ml.Stats
	default:
		return nil, errors.New("no link kind set")
	}
	return l, nil
}

func (d *Daemon) buildGauge(name string, gc *config.GaugeConfig, l *link) (*gauge, error) {
	dim := config.GaugeDim(gc.Kind)
	var unit calib.Unit // a digital state has none
	if dim != 0 {
		var err error
		if unit, err = calib.ParseUnit(gc.Unit, dim); err != nil {
			return nil, err
		}
	}
	g := &gauge{name: name, cfg: gc, dim: dim, unit: unit, transfer: calib.Identity{}}
	switch gc.Driver {
	case "sim":
		if l.sim == nil {
			return nil, errors.New("driver sim needs a simulator link")
		}
		in, err := d.simInstrument(l, name, gc)
		if err != nil {
			return nil, err
		}
		g.drv = in
		g.transfer = in.Transfer() // the instrument's own curve, as its maker ships it
		if gc.Probe != nil {       // a thermocouple's EMF or an RTD's resistance: the config's conversion
			if g.transfer, err = config.ProbeTransfer(gc.Probe); err != nil {
				return nil, err
			}
		}
	case "ascii", "scpi", "modbus":
		if gc.From != "" {
			break // fed by its source's exchange; see linkFeeds
		}
		opts, err := config.DriverOptions(name, gc)
		if err != nil {
			return nil, err
		}
		opts.Now, opts.Log, opts.Trace = d.clock.Now, d.log.With("gauge", name), d.trace
		if og := d.prev[name]; og != nil {
			g.drv = og.drv // a reload keeps the driver of an unchanged gauge
		} else if gc.Driver == "modbus" {
			g.drv, err = drivers.NewModbus(l.modbus, opts)
		} else {
			g.drv, err = drivers.New(gc.Driver, l.stream, opts)
		}
		if err != nil {
			return nil, err
		}
		if g.transfer, err = config.GaugeTransfer(gc); err != nil {
			return nil, err
		}
	default:
		return nil, fmt.Errorf("unknown driver %q", gc.Driver)
	}
	if gc.From != "" {
		var err error
		if g.transfer, err = config.GaugeTransfer(gc); err != nil {
			return nil, err
		}
	}
	return g, nil
}

// linkFeeds attaches every gauge with from: to its source gauge, which
// reads all of their values in one exchange.
func linkFeeds(l *link) error {
	byName := map[string]*gauge{}
	for _, g := range l.gauges {
		byName[g.name] = g
	}
	var polled []*gauge
	for _, g := range l.gauges {
		if g.cfg.From == "" {
			polled = append(polled, g)
			continue
		}
		src := byName[g.cfg.From]
		if src == nil {
			return fmt.Errorf("gauge %s: from: %q is not on link %s", g.name, g.cfg.From, l.name)
		}
		if _, ok := src.drv.(drivers.MultiDriver); !ok {
			return fmt.Errorf("gauge %s: from: %q's driver returns one value per exchange", g.name, g.cfg.From)
		}
		src.fed = append(src.fed, g)
	}
	l.gauges = polled
	return nil
}

func simConfig(cfg *config.Config, s *config.SimConfig) sim.Config {
	c := sim.Config{
		Volume:        float64(cfg.Chamber.Volume),
		StartPressure: float64(s.StartPressure),
		AmbientC:      float64(s.Ambient),
		Rough:         sim.Pump{Speed: float64(s.RoughPump.Speed), Ultimate: float64(s.RoughPump.Ultimate)},
		High:          sim.Pump{Speed: float64(s.HighPump.Speed), Ultimate: float64(s.HighPump.Ultimate)},
		Crossover:     float64(s.Crossover),
		Leak:          float64(s.Leak),
		Outgassing:    float64(s.Outgassing),
		OutgassingExp: s.OutgassingExp,
		WallTau:       s.WallLag.D(),
		Seed:          s.Seed,
	}
	for _, st := range s.Timeline {
		c.Events = append(c.Events, simEvent(st))
	}
	return c
}

func simEvent(st *config.SimStep) sim.Event {
	ev := sim.Event{After: st.After.D()}
	switch {
	case st.Bake != nil:
		ev.Action, ev.Value = "bake", float64(*st.Bake)
	case st.Leak != nil:
		ev.Action, ev.Value = "leak", float64(*st.Leak)
	case st.Bleed != nil:
		ev.Action, ev.Value = "bleed", float64(*st.Bleed)
	case st.Valve == "closed":
		ev.Action = "isolate"
	case st.Valve == "open":
		ev.Action = "reopen"
	case st.Pump != "":
		ev.Action = "pump-" + st.Pump
	case st.Fail != nil:
		ev.Action, ev.Target, ev.Mode = "fail", st.Fail.Gauge, st.Fail.Mode
	case st.Vent != nil:
		ev.Action, ev.Value = "vent", float64(*st.Vent)
	case st.Recover != "":
		ev.Action, ev.Target = "recover", st.Recover
	}
	return ev
}

// SimChamber builds the simulated chamber of the simulator link named link
// in cfg, and its instruments (the gauges with driver sim on that link), on
// the given clock. holdfast simulate serves them over a pseudo-terminal.
func SimChamber(cfg *config.Config, link string, now func() time.Time) (*sim.Chamber, map[string]*sim.Instrument, error) {
	lc, ok := cfg.Links[link]
	if !ok || lc.Simulator == nil {
		return nil, nil, fmt.Errorf("no simulator link %q in %s", link, cfg.File)
	}
	ch, err := sim.New(simConfig(cfg, lc.Simulator), now)
	if err != nil {
		return nil, nil, fmt.Errorf("link %s: %w", link, err)
	}
	ins := map[string]*sim.Instrument{}
	for _, name := range sortedKeys(cfg.Gauges) {
		gc := cfg.Gauges[name]
		if gc.Link != link || gc.Driver != "sim" {
			continue
		}
		in, err := ch.Instrument(simInstrument(name, gc))
		if err != nil {
			return nil, nil, fmt.Errorf("gauge %s: %w", name, err)
		}
		ins[name] = in
	}
	return ch, ins, nil
}

// simInstrument is gauge name's simulated instrument on l: on a reload the
// running one, when the gauge did not change.
func (d *Daemon) simInstrument(l *link, name string, gc *config.GaugeConfig) (*sim.Instrument, error) {
	if og := d.prev[name]; og != nil {
		if in, ok := og.drv.(*sim.Instrument); ok {
			return in, nil
		}
	}
	return l.sim.Instrument(simInstrument(name, gc))
}

func simInstrument(name string, gc *config.GaugeConfig) sim.InstrumentConfig {
	return sim.InstrumentConfig{
		Name: name, Kind: gc.Instrument, Digits: gc.Digits, FullScale: float64(gc.FullScale),
		Where: gc.Where, Protect: float64(gc.Protect), Probe: simProbe(gc.Probe), Noise: gc.Noise,
		Timeout: time.Hour, // a silent instrument waits for the daemon's own read timeout
	}
}

// simProbe is what a simulated temperature instrument reports: "" for °C,
// a thermocouple type letter for its EMF in mV, pt100 or pt1000 for ohms.
func simProbe(p *config.ProbeConfig) string {
	switch {
	case p == nil:
		return ""
	case p.Thermocouple != "":
		return p.Thermocouple
	}
	return p.RTD
}

// sortedKeys returns m's keys in order, so building follows the config's
// names rather than map order.
func sortedKeys[V any](m map[string]V) []string {
	ks := make([]string, 0, len(m))
	for k := range m {
		ks = append(ks, k)
	}
	slices.Sort(ks)
	return ks
}
