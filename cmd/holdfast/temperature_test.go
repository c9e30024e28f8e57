package main

import (
	"bytes"
	"context"
	"encoding/json"
	"strings"
	"testing"
)

func temperatureRun(t *testing.T, args ...string) (string, error) {
	t.Helper()
	var out, errOut bytes.Buffer
	err := run(context.Background(), append([]string{"temperature"}, args...), &out, &errOut)
	return out.String(), err
}

// The first line is the answer. Expected values: NIST Monograph 175 / SRD 60
// tables and IEC 60751 (calib's tests name each; REFERENCES.md §9, §10).
func TestTemperatureCommand(t *testing.T) {
	for _, c := range []struct {
		args  []string
		first string
	}{
		// Type K: 4.096 mV (the table value for 100 °C) inverts to 99.994 °C
		// (E(100 °C) = 4.0962 mV, table rounded to 1 µV; 0.0002 mV / 0.0415 mV/K = 0.006 K).
		{[]string{"--thermocouple", "K", "--emf", "4.096mV"}, "99.99 °C"},
		// REFERENCES.md §9 cold-junction check: 3.096 mV with the junction at 25 °C → 100.0 °C.
		{[]string{"--thermocouple", "k", "--emf", "3.096 mV", "--cold-junction", "25C"}, "100.00 °C"},
		{[]string{"--thermocouple", "K", "--emf", "0.003096V", "--cold-junction", "25C"}, "100.00 °C"},
		{[]string{"--thermocouple", "K", "--temperature", "100C"}, "4.096 mV"},
		// Type T, −100 °C = −3.379 mV (SRD 60 type T table).
		{[]string{"--thermocouple", "T", "--temperature", "-100C"}, "-3.379 mV"},
		// Back: the table's 1 µV rounding is 0.02 K at 0.028 mV/K, so −3.379 mV reads −100.01 °C.
		{[]string{"--thermocouple", "T", "--emf", "-3.379mV"}, "-100.01 °C"},
		// IEC 60751 table: 138.51 Ω ↔ 100 °C (R(100) = 138.5055, so 138.51 Ω is 100.01 °C).
		{[]string{"--rtd", "pt100", "--resistance", "138.51ohm"}, "100.01 °C"},
		{[]string{"--rtd", "pt100", "--temperature", "100C"}, "138.51 Ω"},
		{[]string{"--rtd", "pt100", "--resistance", "60.2558 Ω"}, "-100.00 °C"}, // REFERENCES.md §10
	} {
		out, err := temperatureRun(t, c.args...)
		if err != nil {
			t.Errorf("temperature %q: %v", c.args, err)
			continue
		}
		if first, _, _ := strings.Cut(out, "\n"); first != c.first {
			t.Errorf("temperature %q: first line %q, want %q", c.args, first, c.first)
		}
	}
}

func TestTemperatureCommandJSON(t *testing.T) {
	out, err := temperatureRun(t, "--thermocouple", "K", "--emf", "3.096mV", "--cold-junction", "25C", "--json")
	if err != nil {
		t.Fatal(err)
	}
	var r struct {
		Sensor, Type string
		TemperatureC float64    `json:"temperature_c"`
		EMF          float64    `json:"emf_mv"`
		CJ           float64    `json:"cold_junction_c"`
		Range        [2]float64 `json:"valid_range"`
	}
	if err := json.Unmarshal([]byte(out), &r); err != nil {
		t.Fatalf("%v in %s", err, out)
	}
	// §9: 100.0 °C ± 0.02; the range ends are E(−200 °C) and E(1372 °C), −5.891 and 54.886 mV (SRD 60).
	if r.Sensor != "thermocouple" || r.Type != "K" || r.EMF != 3.096 || r.CJ != 25 ||
		r.TemperatureC < 99.98 || r.TemperatureC > 100.02 || r.Range[0] > -5.8905 || r.Range[1] < 54.8855 {
		t.Errorf("json = %+v", r)
	}
}

func TestTemperatureCommandErrors(t *testing.T) {
	for _, c := range []struct {
		args []string
		want string
	}{
		{[]string{"--thermocouple", "K", "--emf", "60mV"}, "-5.891 … 54.886 mV (-200 … 1372 °C"},
		{[]string{"--thermocouple", "K", "--emf", "4.096"}, "has no unit"},
		{[]string{"--thermocouple", "Q", "--emf", "1mV"}, "known: B, E, J, K, N, R, S, T"},
		{[]string{"--rtd", "pt100", "--resistance", "500ohm"}, "18.52 … 390.48 Ω"},
		{[]string{"--rtd", "pt100", "--resistance", "5mV"}, "want a resistance"},
		{[]string{"--rtd", "pt100", "--temperature", "900C"}, "-200 … 850 °C"},
		{[]string{"--rtd", "pt100", "--cold-junction", "20C", "--resistance", "100ohm"}, "for --thermocouple"},
		{[]string{"--thermocouple", "K", "--emf", "1mV", "--temperature", "20C"}, "give one"},
		{[]string{"--thermocouple", "K"}, "give --emf or --temperature"},
		{[]string{"--thermocouple", "K", "--rtd", "pt100"}, "give one sensor"},
		{nil, "want --thermocouple TYPE"},
	} {
		_, err := temperatureRun(t, c.args...)
		if err == nil || !strings.Contains(err.Error(), c.want) {
			t.Errorf("temperature %q: error %v, want one containing %q", c.args, err, c.want)
		}
	}
}
