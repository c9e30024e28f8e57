package config

import (
	"cmp"
	"fmt"
	"math"
	"net"
	"slices"
	"strconv"
	"strings"
	"time"

	"holdfast/calib"
	"holdfast/daemon/store"
	"holdfast/drivers"
)

// checker collects problems; its methods never stop at the first one.
type checker struct {
	cfg   *Config
	probs []Problem
}

// secretsOptional is set on a config being checked rather than run: a secret
// file that cannot be read here becomes a note, not a problem, so a config
// can be checked on a machine that does not hold the site's secrets.
func (v *checker) secretsOptional() bool { return v.cfg.checkOnly }

func (v *checker) line(path string) int {
	for p := path; p != ""; {
		if l, ok := v.cfg.lines[p]; ok {
			return l
		}
		i := strings.LastIndexAny(p, ".[")
		if i < 0 {
			break
		}
		p = p[:i]
	}
	return 1
}

// problem records one problem per path: a second complaint about a value
// already reported (a bad unit, then "must be positive") only adds noise.
func (v *checker) problem(path, format string, a ...any) {
	for _, p := range v.probs {
		if p.Path == path {
			return
		}
	}
	v.probs = append(v.probs, Problem{Line: v.line(path), Path: path, Msg: fmt.Sprintf(format, a...)})
}

// shortDuration is d as a config would say it: time.Duration's form less
// trailing zero units, so 8h0m0s is 8h, 1h30m0s is 1h30m and 2m0s is 2m;
// 1.5s, 250ms and 1h0m0.5s stay as they are.
func shortDuration(d time.Duration) string {
	s := d.String()
	if strings.HasSuffix(s, "m0s") {
		s = strings.TrimSuffix(s, "0s")
	}
	if strings.HasSuffix(s, "h0m") {
		s = strings.TrimSuffix(s, "0m")
	}
	return s
}

func (v *checker) expect(ok bool, path, format string, a ...any) {
	if !ok {
		v.problem(path, format, a...)
	}
}

var (
	gaugeKinds     = []string{"pressure", "temperature", "state"}
	simInstruments = []string{"pirani", "cdg", "ion", "thermocouple", "rtd"}
)

// check fills defaults and reports every semantic problem.
func check(cfg *Config, prior []Problem) []Problem {
	v := &checker{cfg: cfg, probs: prior}
	v.expect(cfg.Chamber.Name != "", "chamber.name", "missing; give the chamber a name, e.g. name: bakeout-3")
	v.expect(cfg.Chamber.Volume > 0, "chamber.volume", "must be a positive volume such as 30 L, got %g m3", float64(cfg.Chamber.Volume))
	v.expect(cfg.Chamber.VolumeUncertainty >= 0 && cfg.Chamber.VolumeUncertainty < 1, "chamber.volume_uncertainty",
		"want the volume's relative expanded uncertainty (k = 2) from 0%% to under 100%%, such as 5%%, got %g%%", 100*float64(cfg.Chamber.VolumeUncertainty))
	if cfg.HTTP.Listen == "" {
		cfg.HTTP.Listen = DefaultListen
	} else if _, port, err := net.SplitHostPort(cfg.HTTP.Listen); err != nil {
		v.problem("http.listen", "want host:port such as 127.0.0.1:9781, got %q", cfg.HTTP.Listen)
	} else if n, err := strconv.Atoi(port); err != nil || n < 0 || n > 65535 {
		v.problem("http.listen", "port %q is not a number from 0 to 65535", port)
	}
	v.checkHTTPHardening(&cfg.HTTP)
	v.expect(cfg.Store.Dir != "", "store.dir", "missing; say where samples are kept, e.g. dir: /var/lib/holdfast")
	v.checkRetention(cfg.Store.Retention)
	if cfg.Store.FlushEvery == 0 {
		cfg.Store.FlushEvery = Duration(defaultFlushEvery)
	}
	v.expect(cfg.Store.Resolution == 0 || store.CheckResolution(cfg.Store.Resolution.D()) == nil, "store.resolution",
		"want a time step that divides 1s evenly, from 1ns to 1s (e.g. resolution: 1ms), got %s", shortDuration(cfg.Store.Resolution.D()))
	v.expect(len(cfg.Links) > 0, "links", "no links; define at least one (serial, tcp, modbus_rtu, modbus_tcp or simulator)")
	for _, name := range sortedKeys(cfg.Links) {
		v.link(name, cfg.Links[name])
	}
	v.expect(len(cfg.Gauges) > 0, "gauges", "no gauges; define at least one")
	for _, name := range sortedKeys(cfg.Gauges) {
		v.gauge(name, cfg.Gauges[name])
	}
	seen := map[string]int{}
	for i, a := range cfg.Alarms {
		v.alarm(fmt.Sprintf("alarms[%d]", i), a, seen, i)
	}
	v.shelving(&cfg.Shelving)
	v.notifiers(cfg)
	v.report(cfg.Report)
	v.remoteWrite(cfg.RemoteWrite)
	v.bake(cfg.Bake)
	v.agree(cfg)
	slices.SortStableFunc(cfg.Notes, func(a, b string) int { return cmp.Compare(noteLine(a), noteLine(b)) })
	return v.probs
}

// noteLine is the line a note ("LINE: note: ...") is about.
func noteLine(n string) int {
	l, _, _ := strings.Cut(n, ":")
	i, _ := strconv.Atoi(l)
	return i
}

func (v *checker) link(name string, l *LinkConfig) {
	path := "links." + name
	if l == nil {
		l = &LinkConfig{}
	}
	kinds := linkKinds(l)
	if len(kinds) != 1 {
		v.problem(path, "want exactly one of serial, tcp, modbus_rtu, modbus_tcp or simulator, got %d (%s)", len(kinds), strings.Join(kinds, ", "))
		return
	}
	switch {
	case l.Simulator != nil:
		v.sim(path+".simulator", l.Simulator)
	case l.Serial != nil:
		v.driverErrs(path+".serial", l.Serial.Driver(name).Validate())
	case l.TCP != nil:
		v.driverErrs(path+".tcp", l.TCP.Driver(name).Validate())
	case l.ModbusRTU != nil:
		sc := l.ModbusRTU.Driver(name)
		v.driverErrs(path+".modbus_rtu", drivers.ModbusConfig{Name: name, RTU: &sc}.Validate())
	case l.ModbusTCP != nil:
		tc := l.ModbusTCP.Driver(name)
		v.driverErrs(path+".modbus_tcp", drivers.ModbusConfig{Name: name, TCP: &tc}.Validate())
	}
	v.identifyLink(path, l)
}

// driverErrs reports a leaf package's problems, each of which begins with
// the field it names ("timeout: ..." or "exchange[1].expect: ..."), under path.
func (v *checker) driverErrs(path string, err error) {
	if err == nil {
		return
	}
	for _, e := range strings.Split(err.Error(), "\n") {
		field, msg := path, e
		for {
			f, rest, ok := strings.Cut(msg, ": ")
			if !ok || f == "" || strings.ContainsAny(f, " \"'") {
				break
			}
			if rest, ok := strings.CutPrefix(f, "backoff"); ok { // the drivers' name for the config's reconnect:
				f = "reconnect" + rest
			}
			if f != "modbus" || !strings.Contains(path, "modbus_") { // the link's kind is already in path
				field += "." + f
			}
			msg = rest
		}
		v.problem(field, "%s", msg)
	}
}

func (v *checker) sim(path string, s *SimConfig) {
	if s.StartPressure == 0 {
		s.StartPressure = 101325
	}
	if s.Ambient == 0 {
		s.Ambient = 22
	}
	v.expect(s.StartPressure > 0, path+".start_pressure", "must be positive, e.g. 1 atm")
	v.expect(s.RoughPump.Speed > 0, path+".rough_pump.speed", "missing or not positive; e.g. speed: 5 m3/h")
	v.expect(s.RoughPump.Ultimate >= 0, path+".rough_pump.ultimate", "must not be negative")
	v.expect(s.HighPump.Speed >= 0, path+".high_pump.speed", "must not be negative")
	v.expect(s.HighPump.Speed == 0 || s.Crossover > 0, path+".crossover",
		"a high-vacuum stage needs the pressure below which it joins, e.g. crossover: 5 Pa")
	v.expect(s.Leak >= 0 && s.Outgassing >= 0, path, "leak and outgassing must not be negative")
	for i, st := range s.Timeline {
		v.simStep(fmt.Sprintf("%s.timeline[%d]", path, i), st)
	}
}

func (v *checker) simStep(path string, st *SimStep) {
	n := 0
	for _, set := range []bool{st.Bake != nil, st.Leak != nil, st.Bleed != nil, st.Valve != "", st.Pump != "", st.Fail != nil, st.Recover != "", st.Vent != nil} {
		if set {
			n++
		}
	}
	v.expect(n == 1, path, "want exactly one action (bake, leak, bleed, valve, pump, vent, fail or recover) besides after, got %d", n)
	v.expect(st.After >= 0, path+".after", "must not be negative")
	v.expect(st.Valve == "" || st.Valve == "open" || st.Valve == "closed", path+".valve", "want open or closed, got %q", st.Valve)
	v.expect(st.Pump == "" || st.Pump == "on" || st.Pump == "off", path+".pump", "want on or off, got %q", st.Pump)
	if st.Fail != nil {
		v.expect(st.Fail.Mode == "silent" || st.Fail.Mode == "fault", path+".fail.mode",
			"want silent (stops answering) or fault (reports a sensor fault), got %q", st.Fail.Mode)
		v.simGauge(path+".fail.gauge", st.Fail.Gauge)
	}
	if st.Recover != "" {
		v.simGauge(path+".recover", st.Recover)
	}
}

func (v *checker) simGauge(path, name string) {
	g, ok := v.cfg.Gauges[name]
	v.expect(ok && g != nil && g.Driver == "sim", path, "%q is not a simulated gauge (known: %s)", name, knownList(v.gaugesWhere(func(g *GaugeConfig) bool { return g.Driver == "sim" })))
}

func (v *checker) gaugesWhere(f func(*GaugeConfig) bool) []string {
	var names []string
	for _, n := range sortedKeys(v.cfg.Gauges) {
		if g := v.cfg.Gauges[n]; g != nil && f(g) {
			names = append(names, n)
		}
	}
	return names
}

func (v *checker) gauge(name string, g *GaugeConfig) {
	path := "gauges." + name
	if g == nil {
		v.problem(path, "empty; a gauge needs at least link, driver and kind")
		return
	}
	v.gas(name, g)
	v.transpiration(name, g)
	if len(g.Combine) > 0 {
		v.combined(name, g)
		return
	}
	l, ok := v.cfg.Links[g.Link]
	v.expect(ok, path+".link", "unknown link %q (known: %s)", g.Link, knownList(sortedKeys(v.cfg.Links)))
	v.expect(drivers.Known(g.Driver), path+".driver", "unknown driver %q (known: %s)", g.Driver, strings.Join(drivers.Kinds(), ", "))
	if ok && l != nil {
		v.gaugeOnLink(path, g, l)
	}
	if g.Interval == 0 {
		g.Interval = Duration(DefaultInterval)
	}
	v.expect(g.Interval.D() >= minInterval, path+".interval", "must be at least %s, got %s", shortDuration(minInterval), shortDuration(g.Interval.D()))
	if res := v.cfg.Store.Resolution.D(); res > 0 && g.Interval.D() >= minInterval && g.Interval.D() < 2*res {
		v.problem(path+".interval", "%s is less than twice store.resolution (%s): two samples could be stored at one time; poll less often or keep finer times (resolution: 1ms)",
			shortDuration(g.Interval.D()), shortDuration(res))
	}
	if g.Timeout == 0 {
		g.Timeout = Duration(min(g.Interval.D(), 2*time.Second))
	}
	v.expect(slices.Contains(gaugeKinds, g.Kind), path+".kind", "want pressure, temperature or state (a digital input such as a valve-closed switch), got %q", g.Kind)
	v.expect(g.Kind != "state" || g.Unit == "" && g.Transfer == nil && g.RawUnit == "", path+".kind",
		"a state gauge reads 0 or 1 (invert: true on a Modbus input flips it); it takes no unit, raw_unit or transfer")
	dim := GaugeDim(g.Kind)
	if g.Unit == "" {
		g.Unit = map[calib.Dimension]string{calib.Pressure: "Pa", calib.Temperature: "C"}[dim]
	} else if _, err := calib.ParseUnit(g.Unit, dim); err != nil && dim != 0 {
		v.problem(path+".unit", "%v", err)
	}
	if g.Transfer != nil || g.RawUnit != "" {
		_, err := GaugeTransfer(g)
		v.driverErrs(path+map[bool]string{true: ".transfer", false: ""}[g.Transfer != nil], err)
	}
	if g.Driver == "sim" {
		v.expect(slices.Contains(simInstruments, g.Instrument), path+".instrument", "want one of %s, got %q", strings.Join(simInstruments, ", "), g.Instrument)
		v.expect(g.Instrument != "cdg" || g.FullScale > 0, path+".full_scale", "a capacitance gauge needs its full scale, e.g. full_scale: 1000 Pa")
		wantKind := map[string]string{"pirani": "pressure", "cdg": "pressure", "ion": "pressure", "thermocouple": "temperature", "rtd": "temperature"}[g.Instrument]
		v.expect(wantKind == "" || g.Kind == wantKind, path+".kind", "a %s measures %s, got kind %q", g.Instrument, wantKind, g.Kind)
		v.expect(g.Digits >= 0 && g.Digits <= 15, path+".digits", "want 1 to 15 significant digits, got %d", g.Digits)
		v.expect(g.Noise >= 0 && !math.IsInf(g.Noise, 1), path+".noise", "want a standard deviation of 0 or more (0: the instrument's default), got %g", g.Noise)
	} else {
		v.expect(g.Noise == 0, path+".noise", "only a simulated instrument (driver: sim) takes noise; remove it")
	}
	v.expect(g.Driver != "sim" || g.Instrument != "rtd" || g.Probe != nil, path+".probe", "a simulated rtd reports ohms; say which element, e.g. probe: {rtd: pt100}")
	v.calibration(name, g)
	v.ambient(path, g)
	v.probe(path, g)
}

func GaugeDim(kind string) calib.Dimension {
	switch kind {
	case "pressure":
		return calib.Pressure
	case "temperature":
		return calib.Temperature
	}
	return 0
}

func sortProblems(p []Problem) {
	slices.SortStableFunc(p, func(a, b Problem) int { return cmp.Compare(a.Line, b.Line) })
}

// gaugeOnLink checks that a gauge's driver fits its link and its protocol
// settings make sense.
func (v *checker) gaugeOnLink(path string, g *GaugeConfig, l *LinkConfig) {
	switch g.Driver {
	case "sim":
		v.expect(l.Simulator != nil, path+".link", "driver sim needs a simulator link")
		return
	case "modbus":
		v.expect(l.IsModbus(), path+".link", "driver modbus needs a modbus_rtu or modbus_tcp link")
	case "ascii", "scpi":
		v.expect(l.Serial != nil || l.TCP != nil, path+".link", "driver %s needs a serial or tcp link", g.Driver)
	default:
		return
	}
	if g.From != "" {
		v.fromGauge(path, g)
		return
	}
	name := strings.TrimPrefix(path, "gauges.")
	if _, err := DriverOptions(name, g); err != nil {
		v.driverErrs(path, err)
	}
}

// fromGauge checks a gauge that takes its value from another gauge's
// several-value exchange.
func (v *checker) fromGauge(path string, g *GaugeConfig) {
	src, ok := v.cfg.Gauges[g.From]
	switch {
	case !ok || src == nil:
		v.problem(path+".from", "unknown gauge %q", g.From)
	case src.From != "":
		v.problem(path+".from", "%q itself takes its value from %q; name that one", g.From, src.From)
	case src.Link != g.Link || src.Driver != g.Driver:
		v.problem(path+".from", "%q is on link %s with driver %s; a gauge fed by it must be on the same link with the same driver", g.From, src.Link, src.Driver)
	case src.Driver != "ascii" && src.Driver != "scpi":
		v.problem(path+".from", "only ascii and scpi exchanges return several values")
	}
	v.expect(len(g.Exchange) == 0 && g.Query == "", path+".from", "a gauge with from: takes its reading from that gauge's exchange; remove its own exchange or query")
	v.expect(g.Channel != "", path+".channel", "say which value of %q's reply is this gauge's (the gauge group's text, a step's gauge, or 1, 2, ...)", g.From)
}

// knownList lists names for a problem, or says there are none.
func knownList(names []string) string {
	if len(names) == 0 {
		return "none defined"
	}
	return strings.Join(names, ", ")
}
