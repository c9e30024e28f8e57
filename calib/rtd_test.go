package calib

import (
	"errors"
	"math"
	"strings"
	"testing"
)

// IEC 60751 table values for a Pt100, in Ω as the standard's table prints
// them (0.01 Ω). The printed values are from memory (the standard was not
// read; REFERENCES.md §10); each is also checked by hand from the
// Callendar–Van Dusen equation with the standard's A, B, C (D), shown in
// the comment.
var pt100Table = []struct{ t, ohms float64 }{
	{-200, 18.52}, // 100·(1 − 0.78166 − 0.0231 − 0.0100392) = 18.5201; C·(t − 100)·t³ = −4.183e-12·(−300)·(−8e6)
	{-100, 60.26}, // 100·(1 − 0.39083 − 0.005775 − 0.0008366) = 60.2558
	{0, 100.00},   // R0
	{100, 138.51}, // 100·(1 + 0.39083 − 0.005775) = 138.5055
	{200, 175.86}, // 100·(1 + 0.78166 − 0.0231) = 175.8560
	{300, 212.05}, // 100·(1 + 1.17249 − 0.051975) = 212.0515
	{850, 390.48}, // 100·(1 + 3.322055 − 0.41724375) = 390.4811
}

func TestPt100MatchesIEC60751Table(t *testing.T) {
	pt, err := PlatinumRTD("pt100")
	if err != nil {
		t.Fatal(err)
	}
	for _, c := range pt100Table {
		got, err := pt.Resistance(c.t)
		if err != nil || math.Abs(got-c.ohms) > 0.005+1e-9 {
			t.Errorf("R(%g °C) = %.4f Ω, %v; want %.2f ± 0.005", c.t, got, err, c.ohms)
		}
		// Inverse: the table's 0.005 Ω rounding is 0.013 °C at 0.385 Ω/K
		// (0.0125 at the steepest, 0.4 Ω/K near −200 °C ⇒ allow 0.015 °C).
		if lo, _ := pt.ResistanceRange(); c.ohms < lo {
			continue // 18.52 Ω is R(−200 °C) = 18.5201 Ω rounded down, just outside
		}
		temp, err := pt.Temperature(c.ohms)
		if err != nil || math.Abs(temp-c.t) > 0.015 {
			t.Errorf("t(%.2f Ω) = %.4f °C, %v; want %g ± 0.015", c.ohms, temp, err, c.t)
		}
	}
}

// REFERENCES.md §10 (D): α = (R(100) − R0)/(100·R0) = 0.00385055 exactly for
// the IEC 60751 coefficients; R(−100 °C) = 60.2558 Ω to 1e-4.
func TestPt100Alpha(t *testing.T) {
	pt, _ := PlatinumRTD("Pt-100")
	r100, _ := pt.Resistance(100)
	if a := (r100 - 100) / (100 * 100); math.Abs(a-0.00385055) > 1e-12 {
		t.Errorf("alpha = %.10f, want 0.00385055", a)
	}
	if r, _ := pt.Resistance(-100); math.Abs(r-60.2558) > 1e-4 {
		t.Errorf("R(-100 °C) = %.5f, want 60.2558", r)
	}
}

// Pt1000 is the Pt100 scaled by ten (IEC 60751: same A, B, C; R0 = 1000 Ω).
func TestPt1000(t *testing.T) {
	pt, _ := PlatinumRTD("PT1000")
	if r, _ := pt.Resistance(100); math.Abs(r-1385.055) > 1e-6 {
		t.Errorf("Pt1000 R(100 °C) = %.4f, want 1385.055 (D)", r)
	}
}

// Both sides of 0 °C round-trip to 1e-7 °C (D).
func TestRTDRoundTrip(t *testing.T) {
	pt, _ := PlatinumRTD("pt100")
	for temp := -200.0; temp <= 850; temp += 3.7 {
		r, err := pt.Resistance(temp)
		if err != nil {
			t.Fatal(err)
		}
		got, err := pt.Temperature(r)
		if err != nil || math.Abs(got-temp) > 1e-7 {
			t.Errorf("t(R(%g)) = %.9g, %v", temp, got, err)
		}
	}
}

func TestRTDOutOfRange(t *testing.T) {
	pt, _ := PlatinumRTD("pt100")
	for _, c := range []struct {
		name string
		f    func() (float64, error)
		want error
		says string
	}{
		{"ohms above", func() (float64, error) { return pt.Temperature(400) }, ErrAboveRange, "18.52 … 390.48 Ω (-200 … 850 °C"},
		{"ohms below (open or shorted lead)", func() (float64, error) { return pt.Temperature(5) }, ErrBelowRange, "18.52 … 390.48 Ω"},
		{"temperature above", func() (float64, error) { return pt.Resistance(900) }, ErrAboveRange, "-200 … 850 °C"},
		{"temperature below", func() (float64, error) { return pt.Resistance(-250) }, ErrBelowRange, "-200 … 850 °C"},
		{"transfer", func() (float64, error) { return RTDInput{RTD: pt, OhmsPerUnit: 1}.Apply(1e6) }, ErrAboveRange, "pt100"},
	} {
		v, err := c.f()
		if !errors.Is(err, c.want) || !math.IsNaN(v) || !strings.Contains(err.Error(), c.says) {
			t.Errorf("%s: got %g, %v; want NaN and %v naming %q", c.name, v, err, c.want, c.says)
		}
	}
	if _, err := PlatinumRTD("pt500"); err == nil || !strings.Contains(err.Error(), "pt100, pt1000") {
		t.Errorf("unknown element: %v", err)
	}
}
