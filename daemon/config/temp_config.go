package config

import (
	"fmt"
	"strings"

	"holdfast/calib"
)

// ProbeConfig says what a temperature gauge's raw value is: a
// thermocouple's EMF or a resistance thermometer's resistance, in the unit
// input names. The conversion to °C (NIST ITS-90 reference functions, IEC
// 60751) is the gauge's transfer; the raw value stays stored, so history
// can be reprocessed. It is a key of its own, apart from sensor: (the
// pressure gauge's kind, for gas tables).
type ProbeConfig struct {
	Thermocouple string       `yaml:"thermocouple"`  // type letter: B, E, J, K, N, R, S, T
	RTD          string       `yaml:"rtd"`           // pt100 or pt1000
	Input        string       `yaml:"input"`         // unit of the raw value: mV (thermocouple default), V, uV; ohm (rtd default), kohm
	ColdJunction *Temperature `yaml:"cold_junction"` // thermocouple: temperature of its reference junction (the meter's terminals)
}

// probeTransfer builds the conversion raw → °C the probe asks for.
func ProbeTransfer(p *ProbeConfig) (calib.Transfer, error) {
	switch {
	case p.Thermocouple != "" && p.RTD != "":
		return nil, fmt.Errorf("give thermocouple: or rtd:, not both")
	case p.Thermocouple != "":
		tc, err := calib.ThermocoupleType(p.Thermocouple)
		if err != nil {
			return nil, fmt.Errorf("thermocouple: %w", err)
		}
		scale, err := probeInput(p.Input, "mV", calib.Voltage, 1e3)
		if err != nil {
			return nil, err
		}
		if p.ColdJunction == nil {
			return nil, fmt.Errorf("cold_junction: say where the thermocouple's reference junction is, e.g. cold_junction: 22 C (the meter's terminals; 0 C only for an ice bath)")
		}
		cj := float64(*p.ColdJunction)
		if _, err := tc.EMF(cj); err != nil {
			return nil, fmt.Errorf("cold_junction: %w", err)
		}
		return calib.ThermocoupleInput{Type: tc, MillivoltsPerUnit: scale, ColdJunction: cj}, nil
	case p.RTD != "":
		el, err := calib.PlatinumRTD(p.RTD)
		if err != nil {
			return nil, fmt.Errorf("rtd: %w", err)
		}
		if p.ColdJunction != nil {
			return nil, fmt.Errorf("cold_junction: only a thermocouple has one; remove it")
		}
		scale, err := probeInput(p.Input, "ohm", calib.Resistance, 1)
		if err != nil {
			return nil, err
		}
		return calib.RTDInput{RTD: el, OhmsPerUnit: scale}, nil
	}
	return nil, fmt.Errorf("say what the sensor is: thermocouple: K (one of %s) or rtd: pt100 (or %s)",
		strings.Join(calib.ThermocoupleTypes(), ", "), strings.Join(calib.RTDNames(), ", "))
}

// probeInput returns the factor from the raw unit to the unit the
// conversion takes (mV or Ω): per is how many of those one base unit is.
func probeInput(name, def string, d calib.Dimension, per float64) (float64, error) {
	if name == "" {
		name = def
	}
	u, err := calib.ParseUnit(name, d)
	if err != nil {
		return 0, fmt.Errorf("input: %w", err)
	}
	return u.ToSI(1) * per, nil
}

// probe checks a gauge's probe: block.
func (v *checker) probe(path string, g *GaugeConfig) {
	if g.Probe == nil {
		return
	}
	path += ".probe"
	v.expect(g.Kind == "temperature", path, "a probe gives a temperature; set kind: temperature (got %q)", g.Kind)
	v.expect(g.Transfer == nil && g.RawUnit == "", path, "a probe is the gauge's conversion; remove transfer: and raw_unit:")
	if _, err := ProbeTransfer(g.Probe); err != nil {
		v.driverErrs(path, err)
	}
	if g.Driver == "sim" {
		want := map[string]string{"thermocouple": "thermocouple", "rtd": "rtd"}[g.Instrument]
		has := "thermocouple"
		if g.Probe.RTD != "" {
			has = "rtd"
		}
		v.expect(want == has, path, "a simulated %s instrument cannot feed a %s probe; set instrument: %s", g.Instrument, has, has)
		def := map[string]string{"thermocouple": "mV", "rtd": "ohm"}[has]
		v.expect(g.Probe.Input == "" || g.Probe.Input == def, path+".input", "a simulated %s reports %s; remove input: or write input: %s", has, def, def)
	}
}
