package calib

import (
	"math"
	"strings"
	"testing"
)

// REFERENCES.md §2b checks for the column formula p = ρ·g·h.
func TestColumnPublishedValues(t *testing.T) {
	for _, tc := range []struct {
		name string
		c    Column
		want float64
		tol  float64 // Pa
	}{
		// 760 mm of conventional mercury (13595.1 kg/m³, NIST SP 811 App. B)
		// under standard gravity (3rd CGPM 1901) is the standard atmosphere,
		// 101325 Pa (10th CGPM 1954, Res. 4), to the mmHg/Torr difference:
		// 13595.1·9.80665·0.76 = 101325.0144354 Pa by hand.
		{"760 mmHg", Column{Height: 0.760, Density: ConventionalMercury}, 101325.0144354, 1e-6},
		// 13595.1·9.80665·0.001 = 133.322387415 Pa (NIST SP 811 App. B prints 1.333 224 E+02).
		{"1 mmHg", Column{Height: 0.001, Density: ConventionalMercury}, 133.322387415, 1e-9},
		// Invented example oil of 870 kg/m³: 870·9.80665·0.01 = 85.317855 Pa by hand.
		{"hydrocarbon oil 1 cm", Column{Height: 0.01, Density: 870}, 85.318, 0.01},
		// Dibutyl phthalate, 1045.9 kg/m³ at 20 °C (REFERENCES.md §2a):
		// 1045.9·9.80665·0.01 = 102.567752 Pa by hand.
		{"dibutyl phthalate 1 cm", Column{Height: 0.01, Density: 1045.9}, 102.568, 0.01},
		// Mercury at 20 °C, 13545.848 kg/m³ (REFERENCES.md §2, from memory):
		// 13545.848·9.80665·0.76 = 100957.937 Pa by hand; the range
		// for 13545.84–13545.87 kg/m³ is 100957.9–100958.1 Pa.
		{"Hg at 20 °C, g_n", Column{Height: 0.760, Density: 13545.848}, 100957.937, 0.001},
		// Same with IGF80 gravity at 45° (9.8061992 m/s², REFERENCES.md §2b):
		// 13545.848·9.8061992·0.76 = 100953.296 Pa by hand.
		{"Hg at 20 °C, IGF80 45°", Column{Height: 0.760, Density: 13545.848, Gravity: 9.8061992}, 100953.296, 0.001},
	} {
		t.Run(tc.name, func(t *testing.T) {
			got, err := tc.c.Pressure()
			if err != nil || math.Abs(got-tc.want) > tc.tol {
				t.Errorf("Pressure() = %.6f, %v; want %.6f ± %g", got, err, tc.want, tc.tol)
			}
		})
	}
}

// MercuryDensityAt against the CRC Handbook table of the specific volume of
// mercury (REFERENCES.md §2, C2), typed here again from the table rather
// than read from the code: ρ(t) = 13545.848·v(20 °C)/v(t), worked by hand
// (bc, 10 digits) from the entries in mL/g:
//
//	t/°C   v(t)        ρ(t)/(kg/m³)
//	−10    0.0734205   13545.848·0.0738215/0.0734205 = 13619.831
//	  0    0.073554    13595.111 (the conventional 13595.1 to 1e-6)
//	 10    0.0736877   13570.444
//	 20    0.0738215   13545.848 (the anchor, Sommer & Poziemski, M)
//	 30    0.0739552   13521.359
//	 40    0.0740891   13496.922
//	 90    0.0747594   13375.907
//
// The bound is 1e-6 relative (±0.014 kg/m³), the accuracy the table's
// seven digits carry.
func TestMercuryDensityTable(t *testing.T) {
	for _, tc := range []struct{ t, want float64 }{
		{-10, 13619.831}, {0, 13595.111}, {10, 13570.444}, {20, 13545.848},
		{30, 13521.359}, {40, 13496.922}, {90, 13375.907},
	} {
		got, err := MercuryDensityAt(tc.t)
		if err != nil || math.Abs(got-tc.want) > 1e-6*tc.want {
			t.Errorf("MercuryDensityAt(%g) = %.4f, %v; want %.3f ± 1e-6", tc.t, got, err, tc.want)
		}
	}
	// The conventional density at 0 °C (NIST SP 811 App. B, REFERENCES.md §1a)
	// is an independent check of the table's shape between 0 and 20 °C.
	if got, _ := MercuryDensityAt(0); math.Abs(got-ConventionalMercury) > 1e-6*ConventionalMercury {
		t.Errorf("MercuryDensityAt(0) = %.4f, want the conventional %.1f ± 1e-6", got, ConventionalMercury)
	}
}

// Between the table's entries the density follows the table's curve. Hand
// bound: the curvature of v is that of the table's own quadratic fit
// (v” = 2 × 1.22823e-9 mL/(g·K²), CRC Handbook, C2), so the chord between
// entries 10 °C apart misses the curve by at most (10²/8)·v” = 3.1e-8 mL/g,
// 4.2e-7 relative; with the entries' rounding (±5e-8 mL/g) the interpolant
// must lie within 1e-6 of the chord. At 15 °C the chord gives
// v = (0.0736877 + 0.0738215)/2 = 0.0737546, ρ = 13545.848·0.0738215/0.0737546
// = 13558.135 kg/m³; at 25 °C v = 0.07388835, ρ = 13533.592 kg/m³.
func TestMercuryDensityBetweenEntries(t *testing.T) {
	for _, tc := range []struct{ t, chord float64 }{{15, 13558.135}, {25, 13533.592}} {
		got, err := MercuryDensityAt(tc.t)
		if err != nil || math.Abs(got-tc.chord) > 1e-6*tc.chord {
			t.Errorf("MercuryDensityAt(%g) = %.4f, %v; want %.3f ± 1e-6", tc.t, got, err, tc.chord)
		}
	}
	// Falling density throughout the table (the table's v rises).
	prev := math.Inf(1)
	for temp := MercuryMinTemp; temp <= MercuryMaxTemp; temp += 0.5 {
		rho, err := MercuryDensityAt(temp)
		if err != nil || !(rho < prev) {
			t.Fatalf("MercuryDensityAt(%g) = %g, %v after %g; want a falling density", temp, rho, err, prev)
		}
		prev = rho
	}
}

func TestMercuryDensityOutsideTable(t *testing.T) {
	for _, temp := range []float64{-39, 341, math.NaN()} {
		if _, err := MercuryDensityAt(temp); err == nil || !strings.Contains(err.Error(), "-10 to 340 °C") {
			t.Errorf("MercuryDensityAt(%g) error %v, want one naming -10 to 340 °C", temp, err)
		}
		if rho := MercuryDensity(temp); !math.IsNaN(rho) {
			t.Errorf("MercuryDensity(%g) = %g, want NaN", temp, rho)
		}
	}
	_, err := Column{Height: 0.76, Density: MercuryDensity(400)}.Pressure()
	if err == nil || !strings.Contains(err.Error(), "temperature from -10 to 340") {
		t.Errorf("column with an unknown density: %v", err)
	}
}

// A liquid given by density and expansion coefficient: ρ = ρ₀/(1 + β·Δt).
// Hand calculation for the invented oil: 870/(1 + 7e-4·4) = 867.5708 kg/m³.
func TestLiquidExpansion(t *testing.T) {
	c := Column{Height: 1, Density: 870, DensityAt: 20, Temperature: 24, Expansion: 7e-4}
	if got := c.DensityNow(); math.Abs(got-867.5708) > 1e-4 {
		t.Errorf("DensityNow() = %.5f, want 867.5708", got)
	}
}

func TestGravity(t *testing.T) {
	// REFERENCES.md §2b: GRS80 normal gravity (Somigliana's closed form with
	// γ_e = 9.7803267715 m/s², k = 0.001931851353, e² = 0.0066943800229 from
	// H. Moritz, "Geodetic Reference System 1980", J. Geodesy 74 (2000) 128):
	// γ_e at the equator; γ_p = 9.8321863685 m/s² at the pole (Moritz);
	// 9.8061992 at 45° by hand from the formula; 45° at 500 m subtracts the
	// free-air 3.086e-6 m/s² per metre (Heiskanen & Moritz, Physical
	// Geodesy, from memory): 9.8061992 − 0.001543 = 9.8046562.
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
