package calib

import (
	"math"
	"strings"
	"testing"
)

// REFERENCES.md §2b checks for the column and gravity formulas.
func TestColumnPublishedValues(t *testing.T) {
	for _, tc := range []struct {
		name string
		c    Column
		want float64
		tol  float64 // Pa
	}{
		// 760 mm of conventional mercury under standard gravity is the standard
		// atmosphere, 101325 Pa (10th CGPM 1954; NIST SP 811 B.8; REFERENCES.md §1a).
		// 13595.1·9.80665·0.76 = 101325.0144 Pa: the mmHg/Torr difference.
		{"760 mmHg", Column{Height: 0.760, Density: ConventionalMercury}, 101325.0144354, 1e-6},
		{"1 mmHg", Column{Height: 0.001, Density: ConventionalMercury}, 133.322387415, 1e-9},
		{"hydrocarbon oil 1 cm", Column{Height: 0.01, Density: 870}, 85.318, 0.01},
		{"dibutyl phthalate 1 cm", Column{Height: 0.01, Density: 1045.9}, 102.568, 0.01},
		// Common practice: an oil 1/14.67 as dense as mercury gives about 90–91 Pa per cm.
		{"oil 1/14.67 of Hg", Column{Height: 0.01, Density: ConventionalMercury / 14.67}, 90.5, 0.5},
		{"Hg at 20 °C, g_n", Column{Height: 0.760, Density: 13545.87}, 100958.10, 0.05},
		{"Hg at 20 °C, IGF80 45°", Column{Height: 0.760, Density: 13545.87, Gravity: 9.8061992}, 100953.46, 0.05},
	} {
		t.Run(tc.name, func(t *testing.T) {
			got, err := tc.c.Pressure()
			if err != nil || math.Abs(got-tc.want) > tc.tol {
				t.Errorf("Pressure() = %.6f, %v; want %.6f ± %g", got, err, tc.want, tc.tol)
			}
		})
	}
}

// REFERENCES.md §2: CRC polynomial scaled to 13595.1 at 0 °C gives
// 13570.6 / 13546.2 / 13521.8 kg/m³ at 10 / 20 / 30 °C (D); the linear form
// with β ≈ 1.8e-4 /K (C2) agrees to about 0.2 kg/m³ at 20 °C.
func TestMercuryDensity(t *testing.T) {
	for _, tc := range []struct{ t, want float64 }{{0, 13595.1}, {10, 13570.6}, {20, 13546.2}, {30, 13521.8}} {
		if got := MercuryDensity(tc.t); math.Abs(got-tc.want) > 0.05 {
			t.Errorf("MercuryDensity(%g) = %.2f, want %.1f", tc.t, got, tc.want)
		}
	}
	c := Column{Height: 1, Density: ConventionalMercury, DensityAt: 0, Temperature: 20, Expansion: 1.8e-4}
	if got := c.DensityNow(); math.Abs(got-13546.2) > 0.2 {
		t.Errorf("linear expansion density at 20 °C = %.2f, want 13546.2 ± 0.2", got)
	}
}

func TestGravity(t *testing.T) {
	// REFERENCES.md §2b: IGF80 at 0°, 45°, 90°, and 45° at 500 m with the free-air term.
	for _, tc := range []struct{ lat, h, want float64 }{
		{0, 0, 9.7803268}, {45, 0, 9.8061992}, {90, 0, 9.8321864}, {45, 500, 9.8046562},
	} {
		got, err := LocalGravity(tc.lat, tc.h)
		if err != nil || math.Abs(got-tc.want) > 1e-7 {
			t.Errorf("LocalGravity(%g, %g) = %.8f, %v; want %.7f", tc.lat, tc.h, got, err, tc.want)
		}
	}
	if _, err := GravityIGF80(91); err == nil {
		t.Error("latitude 91° accepted")
	}
}

func TestColumnRejectsBadInput(t *testing.T) {
	_, err := Column{Height: -1, Density: 0, Gravity: 1.6}.Pressure()
	for _, w := range []string{"height -1", "density 0", "gravity 1.6"} {
		if err == nil || !strings.Contains(err.Error(), w) {
			t.Errorf("error %v does not mention %q", err, w)
		}
	}
}
