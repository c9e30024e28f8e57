package main

import (
	"bytes"
	"context"
	"encoding/json"
	"fmt"
	"math"
	"os"
	"path/filepath"
	"strings"
	"testing"
)

func leakRun(t *testing.T, args ...string) (string, string, error) {
	t.Helper()
	var out, errOut bytes.Buffer
	err := run(context.Background(), append([]string{"leak"}, args...), &out, &errOut)
	return out.String(), errOut.String(), err
}

var leakLoadlock = filepath.Join("testdata", "leak", "loadlock-mbar.csv")

// The load-lock record is REFERENCES.md §3b's rate-of-rise check written to
// 3 significant digits: V = 100 L, 1.0e-2 → 5.0e-2 mbar in 600 s gives
// Q = 6.6667e-3 mbar·L/s = 6.6667e-4 Pa·m³/s = 5.0004e-3 Torr·L/s.
func TestLeakCommandText(t *testing.T) {
	out, errOut, err := leakRun(t, "--rise", leakLoadlock, "--volume", "100L", "--unit", "mbar",
		"--leak-unit", "Torr*L/s", "--reach", "0.1mbar")
	if err != nil {
		t.Fatalf("%v (stderr %q)", err, errOut)
	}
	for _, want := range []string{
		"classification  leak-dominated: the linear term explains 100 %",
		"leak rate       6.67e-04 ± ", "Pa·m³/s",
		"6.67e-03 ± ", "mbar·L/s",
		"5.00e-03 ± ", "Torr·L/s",
		"outgassing      none needed",
		"fit quality     61 points over 600 s",
		"reading step",
		// The line reaches 0.1 mbar at (0.1 − 0.01)/(0.04/600) = 1350 s (algebra).
		"reaches         0.1 mbar 1350 s after the start (750 s after the last reading)",
		"volume          100 L",
	} {
		if !strings.Contains(out, want) {
			t.Errorf("output lacks %q:\n%s", want, out)
		}
	}
}

func TestLeakCommandJSON(t *testing.T) {
	out, _, err := leakRun(t, "--rise", leakLoadlock, "--volume", "0.1m3", "--unit", "mbar", "--json", "--reach", "1mbar")
	if err != nil {
		t.Fatal(err)
	}
	var m map[string]any
	if err := json.Unmarshal([]byte(out), &m); err != nil {
		t.Fatalf("%v in\n%s", err, out)
	}
	// Every field the help text documents is present.
	for _, k := range []string{"classification", "reason", "leak_rate_pa_m3_per_s", "leak_rate_uncertainty_pa_m3_per_s",
		"outgassing_rate_pa_m3_per_s", "outgassing_rate_uncertainty_pa_m3_per_s", "leak_share", "rise_pa",
		"rise_uncertainty_pa", "fit", "volume_m3", "start_s", "span_s", "samples", "points", "merged", "trimmed",
		"trimmed_span_s", "group_size", "outliers", "noise_pa", "resolution_pa", "autocorrelation", "curved_tried",
		"delta_bic", "notes", "file", "pressure_unit", "leak_rate", "reach"} {
		if _, ok := m[k]; !ok {
			t.Errorf("JSON lacks %q", k)
		}
	}
	fit := m["fit"].(map[string]any)
	for _, k := range []string{"model", "p0_pa", "p0_uncertainty_pa", "slope_pa_per_s", "slope_uncertainty_pa_per_s",
		"curve_pa", "curve_uncertainty_pa", "tau_s", "tau_uncertainty_s", "covariance"} {
		if _, ok := fit[k]; !ok {
			t.Errorf("JSON fit lacks %q", k)
		}
	}
	q := m["leak_rate_pa_m3_per_s"].(float64)
	u := m["leak_rate_uncertainty_pa_m3_per_s"].(float64)
	// 6.6667e-4 Pa·m³/s (REFERENCES.md §3b); 3-digit readings leave an error
	// well under 0.1 %, and the stated uncertainty must cover it.
	if math.Abs(q-6.6667e-4) > 6.6667e-7 || math.Abs(q-6.6667e-4) > 3*u+5e-9 {
		t.Errorf("leak rate %g ± %g Pa·m³/s, want 6.6667e-4", q, u)
	}
	if m["classification"] != "leak-dominated" || m["pressure_unit"] != "mbar" {
		t.Errorf("classification %v, unit %v", m["classification"], m["pressure_unit"])
	}
	if r := m["reach"].(map[string]any); r["reachable"] != true || math.Abs(r["time_s"].(float64)-14850) > 15 {
		t.Errorf("reach %v, want reachable at (1 − 0.01)/(0.04/600) = 14850 s", r)
	}
}

// The same rise written in Torr must give the same leak rate: --unit is the
// file's unit, converted by calib (1 Torr = 101325/760 Pa, REFERENCES.md §1b).
func TestLeakCommandUnits(t *testing.T) {
	var b strings.Builder
	b.WriteString("time_s,pressure\n")
	for i := range 61 {
		torr := (1.0 + 4.0*float64(i)/60) * 760 / 101325 // 1 → 5 Pa in Torr
		fmt.Fprintf(&b, "%d,%.9e\n", 10*i, torr)
	}
	path := filepath.Join(t.TempDir(), "torr.csv")
	if err := os.WriteFile(path, []byte(b.String()), 0o644); err != nil {
		t.Fatal(err)
	}
	out, _, err := leakRun(t, "--rise", path, "--volume", "100L", "--unit", "Torr", "--json")
	if err != nil {
		t.Fatal(err)
	}
	var m map[string]any
	if err := json.Unmarshal([]byte(out), &m); err != nil {
		t.Fatal(err)
	}
	if q := m["leak_rate_pa_m3_per_s"].(float64); math.Abs(q-6.6667e-4) > 1e-8 {
		t.Errorf("leak rate from a Torr file %g Pa·m³/s, want 6.6667e-4", q)
	}
}

func TestLeakCommandErrors(t *testing.T) {
	typos := filepath.Join("testdata", "leak", "typos.csv")
	for _, c := range []struct {
		args []string
		want []string
	}{
		{[]string{"--volume", "30L"}, []string{"usage: leak needs --rise FILE.csv and --volume V"}},
		{[]string{"--rise", leakLoadlock, "--volume", "30", "--unit", "L", "--leak-unit", "mbar"},
			[]string{"--volume: ", "--unit: ", "--leak-unit: "}},
		{[]string{"--rise", "missing.csv", "--volume", "30L"}, []string{"leak: open missing.csv"}},
		{[]string{"--rise", typos, "--volume", "30L"}, []string{
			typos + ":5: 1 fields, want 2 separated by a comma", typos + `:6: pressure "" is not a number`,
			typos + `:7: time "forty" is not a number of seconds`}},
	} {
		_, _, err := leakRun(t, c.args...)
		if err == nil {
			t.Errorf("leak %q succeeded, want an error", c.args)
			continue
		}
		for _, w := range c.want {
			if !strings.Contains(err.Error(), w) {
				t.Errorf("leak %q: error\n%v\nlacks %q", c.args, err, w)
			}
		}
	}
}

func TestLeakCommandHelpDocumentsJSON(t *testing.T) {
	_, errOut, _ := leakRun(t, "--help")
	for _, want := range []string{"time_s,pressure", "leak_rate_pa_m3_per_s", "never a safety interlock", "--leak-unit"} {
		if !strings.Contains(errOut, want) {
			t.Errorf("help lacks %q", want)
		}
	}
}

// A file in mbar read without a unit was taken as pascals and every figure
// came out 100 times off. The unit is now required: from --unit or from the
// header, and the two must agree. The record is REFERENCES.md §3b's
// (Q = 6.6667e-4 Pa·m³/s at V = 100 L; 1 mbar = 100 Pa).
func TestLeakCommandNeedsAUnit(t *testing.T) {
	if _, _, err := leakRun(t, "--rise", leakLoadlock, "--volume", "100L", "--json"); err == nil ||
		!strings.Contains(err.Error(), "which unit") || !strings.Contains(err.Error(), "--unit mbar") {
		t.Errorf("no --unit and a header without one: error %v, want it to ask for the unit", err)
	}
	raw, err := os.ReadFile(leakLoadlock)
	if err != nil {
		t.Fatal(err)
	}
	// The same record as a spreadsheet exports it: quoted, CRLF, the unit in the header.
	var b strings.Builder
	b.WriteString("\"time_s\",\"pressure_mbar\"\r\n")
	for _, line := range strings.Split(string(raw), "\n") {
		if f := strings.Split(strings.TrimSpace(line), ","); len(f) == 2 && !strings.HasPrefix(f[0], "#") && f[0] != "time_s" {
			fmt.Fprintf(&b, "\"%s\",\"%s\"\r\n", f[0], f[1])
		}
	}
	path := filepath.Join(t.TempDir(), "export.csv")
	if err := os.WriteFile(path, []byte(b.String()), 0o644); err != nil {
		t.Fatal(err)
	}
	out, _, err := leakRun(t, "--rise", path, "--volume", "100L", "--json")
	if err != nil {
		t.Fatal(err)
	}
	var m map[string]any
	if err := json.Unmarshal([]byte(out), &m); err != nil {
		t.Fatal(err)
	}
	if q, _ := m["leak_rate_pa_m3_per_s"].(float64); math.Abs(q-6.6667e-4)/6.6667e-4 > 0.01 || m["pressure_unit"] != "mbar" {
		t.Errorf("header in mbar: leak rate %g Pa·m³/s in %v; want 6.6667e-4 (REFERENCES.md §3b) in mbar", q, m["pressure_unit"])
	}
	if _, _, err := leakRun(t, "--rise", path, "--volume", "100L", "--unit", "Pa"); err == nil || !strings.Contains(err.Error(), "header says the pressures are in mbar but --unit says Pa") {
		t.Errorf("header mbar, --unit Pa: error %v, want the disagreement named", err)
	}
}

// A record that falls slowly (still pumped, or a gauge drifting down) has
// a fitted leak term below zero: that is no finding, and the text says "no
// leak found" (below its upper bound, or "the pressure does not rise" when
// that bound is zero) instead of printing a negative rate.
// The record: 1.000e-3 mbar falling 1e-7 mbar/s over 600 s, 61 points.
func TestLeakCommandNegativeRateIsNoFinding(t *testing.T) {
	var b strings.Builder
	b.WriteString("time_s,pressure_mbar\n")
	for i := 0; i <= 60; i++ {
		s := float64(10 * i)
		fmt.Fprintf(&b, "%g,%.6g\n", s, 1e-3-1e-7*s)
	}
	path := filepath.Join(t.TempDir(), "falling.csv")
	if err := os.WriteFile(path, []byte(b.String()), 0o600); err != nil {
		t.Fatal(err)
	}
	out, errOut, err := leakRun(t, "--rise", path, "--volume", "30L")
	if err != nil {
		t.Fatalf("%v (stderr %q)", err, errOut)
	}
	if !strings.Contains(out, "leak rate       no leak found") || strings.Contains(out, "leak rate       -") {
		t.Errorf("a falling record's text should say no leak found:\n%s", out)
	}
}

// The gauge's and the volume's uncertainties widen the leak rate's, and the
// notes say what the interval holds. On the load-lock record (Q =
// 6.6667e-4 Pa·m³/s) a 1 % gauge and a 5 % volume (both k = 2) give, as
// relative standard uncertainties 0.5 % and 2.5 %, u_rel = √(0.5² + 2.5²) %
// = 2.5495 % alone, so u(Q) ≥ 0.025495 × 6.6667e-4 = 1.6997e-5 Pa·m³/s
// (JCGM 100:2008, §5.1.6); the fit's own part only adds to it. (Q read
// from 3-digit readings may differ from 6.6667e-4 by a part in 1000.)
func TestLeakCommandUncertainties(t *testing.T) {
	out, _, err := leakRun(t, "--rise", leakLoadlock, "--volume", "100L", "--unit", "mbar", "--json",
		"--gauge-uncertainty", "1%", "--volume-uncertainty", "5%")
	if err != nil {
		t.Fatal(err)
	}
	var r struct {
		U      float64  `json:"leak_rate_uncertainty_pa_m3_per_s"`
		Scale  float64  `json:"scale_relative_uncertainty"`
		Volume float64  `json:"volume_relative_uncertainty"`
		Notes  []string `json:"notes"`
	}
	if err := json.Unmarshal([]byte(out), &r); err != nil {
		t.Fatal(err)
	}
	if r.U < 0.999*1.6997e-5 || r.U > 1.1*1.6997e-5 || r.Scale != 0.005 || r.Volume != 0.025 {
		t.Errorf("u(Q) %.5g, scale %g, volume %g; want about 1.6997e-5 (not below), 0.005, 0.025", r.U, r.Scale, r.Volume)
	}
	if notes := strings.Join(r.Notes, "\n"); !strings.Contains(notes, "the gauge's scale (1 % at k = 2) and the volume (5 % at k = 2)") {
		t.Errorf("notes do not say what the interval holds:\n%s", notes)
	}
	out, _, err = leakRun(t, "--rise", leakLoadlock, "--volume", "100L", "--unit", "mbar")
	if err != nil || !strings.Contains(out, "leaves out the gauge's accuracy (give --gauge-uncertainty) and the volume's") {
		t.Errorf("without them the text does not say what is left out (%v):\n%s", err, out)
	}
	if _, _, err := leakRun(t, "--rise", leakLoadlock, "--volume", "100L", "--unit", "mbar", "--volume-uncertainty", "0.05"); err == nil ||
		!strings.Contains(err.Error(), "--volume-uncertainty: want a percentage") {
		t.Errorf("a share without %%: %v, want refused", err)
	}
}
