package config

import (
	"math"
	"strings"
	"testing"
)

const probeConfig = `
chamber: {name: probes, volume: 30 L}
links:
  daq: {tcp: {address: "127.0.0.1:1"}}
gauges:
GAUGES
`

// Each bad probe is a problem naming its line and the fix.
func TestProbeConfigProblems(t *testing.T) {
	gauges := `  tc-ok: {link: daq, driver: scpi, query: "READ?", kind: temperature, unit: C, probe: {thermocouple: K, input: V, cold_junction: 22 C}}
  tc-type: {link: daq, driver: scpi, query: "READ?", kind: temperature, unit: C, probe: {thermocouple: Q, cold_junction: 22 C}}
  tc-nocj: {link: daq, driver: scpi, query: "READ?", kind: temperature, unit: C, probe: {thermocouple: J}}
  tc-input: {link: daq, driver: scpi, query: "READ?", kind: temperature, unit: C, probe: {thermocouple: T, input: ohm, cold_junction: 20 C}}
  rtd-cj: {link: daq, driver: scpi, query: "READ?", kind: temperature, unit: C, probe: {rtd: pt100, cold_junction: 20 C}}
  both: {link: daq, driver: scpi, query: "READ?", kind: temperature, unit: C, probe: {rtd: pt100, thermocouple: K}}
  pressure: {link: daq, driver: scpi, query: "READ?", kind: pressure, unit: Pa, probe: {rtd: pt100}}`
	_, err := parseConfig("probes.yaml", []byte(strings.Replace(probeConfig, "GAUGES", gauges, 1)), true)
	if err == nil {
		t.Fatal("no problems")
	}
	for _, want := range []string{
		`probes.yaml:7: gauges.tc-type.probe.thermocouple: unknown thermocouple type "Q" (known: B, E, J, K, N, R, S, T)`,
		`probes.yaml:8: gauges.tc-nocj.probe.cold_junction: say where`,
		`probes.yaml:9: gauges.tc-input.probe.input:`,
		`probes.yaml:10: gauges.rtd-cj.probe.cold_junction: only a thermocouple has one`,
		`probes.yaml:11: gauges.both.probe: give thermocouple: or rtd:, not both`,
		`probes.yaml:12: gauges.pressure.probe: a probe gives a temperature`,
	} {
		if !strings.Contains(err.Error(), want) {
			t.Errorf("problems lack %q; got:\n%v", want, err)
		}
	}
	if strings.Contains(err.Error(), "tc-ok") {
		t.Errorf("a good probe reported:\n%v", err)
	}
}

// The probe is the gauge's transfer: type K in volts with the cold junction
// at 25 °C, 0.003096 V → 100.0 °C (REFERENCES.md §9); Pt100 138.5055 Ω →
// 100 °C (§10); out of range is over-range, not a clamped value.
func TestProbeTransfer(t *testing.T) {
	cj := Temperature(25)
	tr, err := GaugeTransfer(&GaugeConfig{Kind: "temperature", Probe: &ProbeConfig{Thermocouple: "K", Input: "V", ColdJunction: &cj}})
	if err != nil {
		t.Fatal(err)
	}
	if v, err := tr.Apply(0.003096); err != nil || math.Abs(v-100) > 0.02 {
		t.Errorf("type K 3.096 mV at 25 °C = %g, %v", v, err)
	}
	if _, err := tr.Apply(0.06); err == nil || !strings.Contains(err.Error(), "54.886 mV") {
		t.Errorf("60 mV: %v", err)
	}
	tr, err = GaugeTransfer(&GaugeConfig{Kind: "temperature", Probe: &ProbeConfig{RTD: "pt100"}})
	if err != nil {
		t.Fatal(err)
	}
	if v, err := tr.Apply(138.5055); err != nil || math.Abs(v-100) > 1e-4 {
		t.Errorf("Pt100 138.5055 Ω = %g, %v", v, err)
	}
}
