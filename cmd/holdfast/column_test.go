package main

import (
	"encoding/json"
	"math"
	"strings"
	"testing"
)

func TestColumnCommand(t *testing.T) {
	for _, tc := range []struct {
		name  string
		args  []string
		first string // the first output line
		kind  string
	}{
		// 760 mm of conventional mercury, standard gravity: 101325 Pa
		// (REFERENCES.md §1a/§2b; 13595.1·9.80665·0.76 = 101325.0144).
		{"standard atmosphere", []string{"--height", "76cm", "--density", "13595.1kg/m3"}, "101325.0 Pa", "absolute"},
		{"in Torr", []string{"--height", "76cm", "--density", "13595.1kg/m3", "--unit", "Torr"}, "760.0001 Torr", "absolute"},
		// REFERENCES.md §2b: oil of 870 kg/m3, 1 cm → 85.318 Pa, in an open U-tube.
		{"oil U-tube", []string{"--height", "1cm", "--density", "870kg/m3", "--open"}, "85.31785 Pa", "difference"},
		// REFERENCES.md §2b: IGF80 at 45° gives 9.8061992; 760 mm at 13545.87 → 100953.46 Pa.
		{"local gravity", []string{"--height", "760mm", "--density", "13545.87kg/m3", "--latitude", "45"}, "100953.5 Pa", "absolute"},
	} {
		t.Run(tc.name, func(t *testing.T) {
			out, _, err := runCmd(t, append([]string{"column"}, tc.args...)...)
			if err != nil {
				t.Fatal(err)
			}
			lines := strings.Split(out, "\n")
			if lines[0] != tc.first || !strings.HasPrefix(lines[1], tc.kind) {
				t.Errorf("output %q, want first line %q and kind %q", out, tc.first, tc.kind)
			}
		})
	}
}

// CRC mercury law at 20 °C: 13546.2 kg/m3 (REFERENCES.md §2, D), so 76 cm
// under standard gravity is 0.76·9.80665·13546.2 = 100960.6 Pa; ±0.05 kg/m3
// in the density is ±0.4 Pa.
func TestColumnMercuryAt20C(t *testing.T) {
	out, _, err := runCmd(t, "column", "--height", "76cm", "--liquid", "mercury", "--temperature", "20C", "--json")
	if err != nil {
		t.Fatal(err)
	}
	var got struct {
		Pressure float64 `json:"pressure_pa"`
	}
	if err := json.Unmarshal([]byte(out), &got); err != nil || math.Abs(got.Pressure-0.76*9.80665*13546.2) > 0.4 {
		t.Errorf("mercury at 20 C: %s, %v", out, err)
	}
}

func TestColumnJSONAndErrors(t *testing.T) {
	out, _, err := runCmd(t, "column", "--height", "1cm", "--density", "1045.9kg/m3", "--json")
	if err != nil {
		t.Fatal(err)
	}
	var got struct {
		Pressure float64 `json:"pressure_pa"`
		Kind     string  `json:"kind"`
	}
	// REFERENCES.md §2b: dibutyl phthalate, 1 cm → 102.568 Pa.
	if err := json.Unmarshal([]byte(out), &got); err != nil || math.Abs(got.Pressure-102.568) > 0.01 || got.Kind != "absolute" {
		t.Errorf("JSON %s: %+v, %v", out, got, err)
	}
	_, _, err = runCmd(t, "column", "--height", "76", "--density", "13595.1kg/m3", "--temperature", "25C", "--gravity", "9.8", "--latitude", "10")
	for _, w := range []string{"--height", "--expansion", "not both"} {
		if err == nil || !strings.Contains(err.Error(), w) {
			t.Errorf("error %v does not mention %q", err, w)
		}
	}
}
