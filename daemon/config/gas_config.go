package config

import (
	"errors"
	"fmt"
	"math"
	"reflect"
	"slices"
	"strings"
	"time"

	"gopkg.in/yaml.v3"

	"holdfast/calib"
)

// GasConfig is the gas in the chamber, for a gauge whose reading depends
// on it (thermal-conductivity and ionisation gauges, calibrated for N₂).
// Written gas: argon, the factor comes from calib's table for the gauge's
// sensor; written {name, factor or sensitivity, source}, from the user.
type GasConfig struct {
	Name        string  `yaml:"name"`
	Factor      float64 `yaml:"factor"`      // true = factor × indicated
	Sensitivity float64 `yaml:"sensitivity"` // ionisation gauges: true = indicated / sensitivity
	Source      string  `yaml:"source"`      // where a user's factor comes from; required with factor or sensitivity
}

// gasYAML is the mapping form of GasConfig, without its UnmarshalYAML.
type gasYAML GasConfig

// UnmarshalYAML reads gas: NAME or the mapping form. Unknown keys and bad
// values come back as a *yaml.TypeError naming their lines.
func (c *GasConfig) UnmarshalYAML(n *yaml.Node) error {
	switch n.Kind {
	case yaml.ScalarNode:
		*c = GasConfig{Name: n.Value}
		return nil
	case yaml.MappingNode:
	default:
		return typeError(n, "want a gas name such as argon, or {name, factor or sensitivity, source}")
	}
	var probs []Problem
	walkKeys(n, reflect.TypeFor[gasYAML](), "gas", map[string]int{}, &probs)
	var msgs []string
	for _, p := range probs {
		msgs = append(msgs, fmt.Sprintf("line %d: %s", p.Line, p.Msg))
	}
	var y gasYAML
	if err := n.Decode(&y); err != nil {
		var te *yaml.TypeError
		if !errors.As(err, &te) {
			return err
		}
		msgs = append(msgs, te.Errors...)
	}
	*c = GasConfig(y)
	if len(msgs) > 0 {
		return &yaml.TypeError{Errors: msgs}
	}
	return nil
}

// TranspirationConfig corrects a gauge whose sensor is held at another
// temperature than the chamber (a heated capacitance diaphragm gauge) for
// thermal transpiration: the gauge reads high by up to √(T_sensor/T_chamber)
// at low pressure.
type TranspirationConfig struct {
	SensorTemperature  *Temperature `yaml:"sensor_temperature"`  // the sensor's regulated temperature
	ChamberTemperature *Temperature `yaml:"chamber_temperature"` // fixed; with chamber_gauge, used while that has no recent reading
	ChamberGauge       string       `yaml:"chamber_gauge"`       // a temperature gauge on the chamber
	MaxAge             Duration     `yaml:"max_age"`             // an older chamber_gauge reading is not used; default 1 min
	Model              string       `yaml:"model"`               // molecular or setina
	TubeDiameter       Length       `yaml:"tube_diameter"`       // setina: inner diameter of the tube to the chamber
	Gas                string       `yaml:"gas"`                 // setina: the gas (N2, He, Ar, H2); default N2
}

// sensorKinds are what a gauge's gas dependence follows from: its sensor.
// A simulated gauge's instrument says it; a real one says sensor:.
var sensorKinds = []string{"pirani", "ion", "cdg"}

// gaugeSensor is the gauge's sensor kind: sensor:, or a simulated gauge's instrument.
func gaugeSensor(g *GaugeConfig) string {
	if g.Sensor == "" && g.Driver == "sim" {
		return g.Instrument
	}
	return g.Sensor
}

// gasFactor returns the correction the gauge's gas: setting asks for.
func GasFactor(g *GaugeConfig) (calib.GasFactor, error) {
	c := g.Gas
	name, err := calib.GasName(c.Name)
	if c.Name == "" {
		err = errors.New("name: say which gas, e.g. gas: argon")
	}
	if err != nil {
		return calib.GasFactor{}, err
	}
	sensor := gaugeSensor(g)
	if sensor == "cdg" {
		return calib.GasFactor{}, errors.New("a capacitance diaphragm gauge measures force per area, the same for every gas, so it takes no gas factor; remove gas: (a heated gauge's transpiration gas goes in transpiration.gas)")
	}
	switch {
	case c.Factor != 0 && c.Sensitivity != 0:
		return calib.GasFactor{}, errors.New("give factor (true = factor × indicated) or sensitivity (true = indicated / sensitivity), not both")
	case c.Factor != 0 || c.Sensitivity != 0:
		f := c.Factor
		if c.Sensitivity != 0 {
			if sensor == "pirani" {
				return calib.GasFactor{}, errors.New("sensitivity: a thermal-conductivity gauge's correction is a factor (true = factor × indicated); write factor:")
			}
			f = 1 / c.Sensitivity
		}
		if !(f > 0) || math.IsInf(f, 0) {
			return calib.GasFactor{}, errors.New("factor: must be a positive number")
		}
		if strings.TrimSpace(c.Source) == "" {
			return calib.GasFactor{}, errors.New(`source: say where the factor comes from, e.g. source: "measured against the reference gauge, 2026-03"`)
		}
		return calib.GasFactor{Gas: name, Factor: f, Source: c.Source}, nil
	case c.Source != "":
		return calib.GasFactor{}, errors.New("source: describes a factor you give; without factor or sensitivity the table's own source is used")
	}
	switch sensor {
	case "pirani":
		return calib.ThermalGas(name)
	case "ion":
		return calib.IonGas(name)
	case "":
		return calib.GasFactor{}, errors.New("say which table applies: sensor: pirani (thermal conductivity) or sensor: ion (hot-cathode ionisation), or give factor: with its source")
	}
	return calib.GasFactor{}, fmt.Errorf("a %s gauge's reading does not depend on the gas this way; remove gas:", sensor)
}

// gas checks a gauge's gas: and sensor: and notes the factor and its source.
func (v *checker) gas(name string, g *GaugeConfig) {
	path := "gauges." + name
	if g.Sensor != "" {
		switch {
		case len(g.Combine) > 0:
			v.problem(path+".sensor", "a combined gauge has no sensor of its own; remove sensor:")
		case !slices.Contains(sensorKinds, g.Sensor):
			v.problem(path+".sensor", "want pirani (thermal conductivity), ion (hot-cathode ionisation) or cdg (capacitance diaphragm), got %q", g.Sensor)
		case g.Driver == "sim" && g.Instrument != g.Sensor:
			v.problem(path+".sensor", "a simulated gauge's sensor is its instrument (%s); remove sensor:", g.Instrument)
		}
	}
	if g.Gas == nil {
		return
	}
	path += ".gas"
	switch {
	case len(g.Combine) > 0:
		v.problem(path, "a combined gauge blends its members' corrected samples; put gas: on the members")
		return
	case g.Kind != "pressure":
		v.problem(path, "only pressure gauges take a gas correction, not a %q gauge", g.Kind)
		return
	}
	f, err := GasFactor(g)
	if err != nil {
		v.driverErrs(path, err)
		return
	}
	msg := fmt.Sprintf("%s: true pressure = %.4g × indicated (%s)", f.Gas, f.Factor, f.Source)
	if gaugeSensor(g) == "pirani" && f.Factor != 1 {
		msg += "; valid in the linear range only: above about 10 mbar no single factor holds, and a heavy gas such as argon reads far low near atmosphere, so do not judge venting by this gauge"
	}
	v.note(path, "%s", msg)
}

// note records a remark that is not a problem; holdfast check prints it.
func (v *checker) note(path, format string, a ...any) {
	v.cfg.Notes = append(v.cfg.Notes, fmt.Sprintf("%d: note: %s: %s", v.line(path), path, fmt.Sprintf(format, a...)))
}

// transpiration checks a gauge's transpiration: and notes what it does.
func (v *checker) transpiration(name string, g *GaugeConfig) {
	t := g.Transpiration
	if t == nil {
		return
	}
	path := "gauges." + name + ".transpiration"
	switch {
	case len(g.Combine) > 0:
		v.problem(path, "a combined gauge blends its members' corrected samples; put transpiration: on the members")
		return
	case g.Kind != "pressure":
		v.problem(path, "only pressure gauges take a transpiration correction, not a %q gauge", g.Kind)
		return
	}
	v.expect(t.SensorTemperature != nil, path+".sensor_temperature", "missing; give the sensor's regulated temperature, e.g. sensor_temperature: 45 C")
	v.expect(t.ChamberTemperature != nil || t.ChamberGauge != "", path, "say the chamber's temperature: chamber_temperature: 20 C, or chamber_gauge: a temperature gauge on the chamber (or both: the fixed value stands in while the gauge has no recent reading)")
	if t.ChamberGauge != "" {
		v.tempGauge(path+".chamber_gauge", t.ChamberGauge)
		if t.MaxAge == 0 {
			t.MaxAge = Duration(time.Minute)
		}
		if src := v.cfg.Gauges[t.ChamberGauge]; src != nil && src.Kind == "temperature" {
			need := max(src.Interval.D(), DefaultInterval) + src.Timeout.D()
			v.expect(t.MaxAge.D() >= need, path+".max_age",
				"must be at least %s (%s's interval and timeout), got %s; a shorter age makes the correction come and go", need, t.ChamberGauge, t.MaxAge.D())
		}
	} else {
		v.expect(t.MaxAge == 0, path+".max_age", "max_age limits the age of a chamber_gauge reading; there is none here")
	}
	for _, c := range []struct {
		key string
		t   *Temperature
	}{{"sensor_temperature", t.SensorTemperature}, {"chamber_temperature", t.ChamberTemperature}} {
		if c.t != nil {
			if _, err := calib.MolecularRatio(float64(*c.t), 20); err != nil {
				v.problem(path+"."+c.key, "%v", err)
			}
		}
	}
	switch t.Model {
	case "molecular":
		v.expect(t.TubeDiameter == 0, path+".tube_diameter", "the molecular ratio does not depend on the tube; tube_diameter is for model: setina")
		v.expect(t.Gas == "", path+".gas", "the molecular ratio is the same for every gas; gas is for model: setina")
	case "setina":
		if t.Gas == "" {
			t.Gas = "N2"
		}
		tr := calib.Transpiration{GaugeC: 45, ChamberC: 20, Diameter: float64(t.TubeDiameter)}
		if _, err := tr.Setina(t.Gas, 1); err != nil {
			key := ".gas"
			if t.TubeDiameter == 0 || strings.Contains(err.Error(), "diameter") {
				key, err = ".tube_diameter", fmt.Errorf("give the inner diameter of the tube between gauge and chamber, e.g. tube_diameter: 4.6 mm (%w)", err)
			}
			v.problem(path+key, "%v", err)
		}
	default:
		v.problem(path+".model", "want molecular (the low-pressure limit √(T_chamber/T_sensor); in a tube of a few mm it over-corrects by up to about 4 %% above about 1 Pa) or setina (Šetina 1999, across the range; needs tube_diameter), got %q", t.Model)
		return
	}
	if t.SensorTemperature != nil && t.ChamberTemperature != nil {
		sc, cc := float64(*t.SensorTemperature), float64(*t.ChamberTemperature)
		if r, err := calib.MolecularRatio(sc, cc); err == nil {
			v.note(path, "%s model, sensor %g °C, chamber %g °C: chamber pressure = %.5f × reading at low pressure (√(%.2f K/%.2f K))%s",
				t.Model, sc, cc, 1/r, cc+273.15, sc+273.15, map[bool]string{true: ", tending to 1 at high pressure", false: " at every pressure"}[t.Model == "setina"])
		}
	}
}

// tempGauge checks that name is a temperature gauge.
func (v *checker) tempGauge(path, name string) {
	src, ok := v.cfg.Gauges[name]
	switch {
	case !ok || src == nil:
		v.problem(path, "unknown gauge %q (known temperature gauges: %s)", name,
			knownList(v.gaugesWhere(func(g *GaugeConfig) bool { return g.Kind == "temperature" })))
	case src.Kind != "temperature":
		v.problem(path, "%q measures %s; want a temperature gauge", name, src.Kind)
	}
}
