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
		// Invented example oil of 870 kg/m3, 1 cm, open U-tube: 870·9.80665·0.01 = 85.317855 Pa by hand.
		{"oil U-tube", []string{"--height", "1cm", "--density", "870kg/m3", "--open"}, "85.31785 Pa", "difference"},
		// REFERENCES.md §2b: GRS80 normal gravity at 45° is 9.8061992 m/s² (Moritz 2000);
		// 760 mm of mercury at 20 °C (13545.848 kg/m3, from memory): 13545.848·9.8061992·0.76 = 100953.296 Pa by hand.
		{"local gravity", []string{"--height", "760mm", "--density", "13545.848kg/m3", "--latitude", "45"}, "100953.3 Pa", "absolute"},
		// --liquid mercury at 20 °C, standard gravity: the table gives 13545.848 kg/m3 (REFERENCES.md §2),
		// so 13545.848·9.80665·0.76 = 100957.94 Pa by hand; the bounds for 13545.84–13545.87 kg/m3
		// are 100957.9–100958.1 Pa, and the command prints seven digits.
		{"mercury at 20 C", []string{"--height", "76cm", "--liquid", "mercury", "--temperature", "20C"}, "100957.9 Pa", "absolute"},
		// Without a temperature, mercury is the conventional 13595.1 kg/m3 (as the mmHg unit): 101325.0144 Pa.
		{"conventional mercury", []string{"--height", "76cm", "--liquid", "mercury"}, "101325.0 Pa", "absolute"},
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

// The full-precision value behind the "mercury at 20 C" case: the density
// of mercury at 20 °C is 13545.84–13545.87 kg/m³ (CRC Handbook table;
// Sommer & Poziemski 13545.848, from memory; REFERENCES.md §2), so 76 cm under
// standard gravity (the command's default) is ρ·g·h = 13545.85 × 9.80665 ×
// 0.76 = 100957.95 Pa, between 100957.88 (13545.84) and 100958.10 (13545.87).
func TestColumnMercuryAt20C(t *testing.T) {
	out, _, err := runCmd(t, "column", "--height", "76cm", "--liquid", "mercury", "--temperature", "20C", "--json")
	if err != nil {
		t.Fatal(err)
	}
	var got struct {
		Pressure float64 `json:"pressure_pa"`
		Density  float64 `json:"density_kg_m3"`
		Gravity  float64 `json:"gravity_m_s2"`
	}
	if err := json.Unmarshal([]byte(out), &got); err != nil {
		t.Fatalf("JSON %s: %v", out, err)
	}
	if got.Pressure < 100957.88 || got.Pressure > 100958.10 || got.Density < 13545.84 || got.Density > 13545.87 || got.Gravity != 9.80665 {
		t.Errorf("mercury at 20 C: %s; want 100957.88–100958.10 Pa from 13545.84–13545.87 kg/m3 and g_n", out)
	}
	_, _, err = runCmd(t, "column", "--height", "76cm", "--liquid", "mercury", "--temperature", "400C")
	if err == nil || !strings.Contains(err.Error(), "--temperature") || !strings.Contains(err.Error(), "-10 to 340") {
		t.Errorf("mercury at 400 C: error %v, want one naming --temperature and the table's range", err)
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
	// Dibutyl phthalate, 1045.9 kg/m3 (REFERENCES.md §2a), 1 cm: 1045.9·9.80665·0.01 = 102.568 Pa by hand.
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
