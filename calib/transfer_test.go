package calib

import (
	"errors"
	"math"
	"strings"
	"testing"
)

func unit(t *testing.T, name string) Unit {
	t.Helper()
	u, err := ParseUnit(name, Pressure)
	if err != nil {
		t.Fatal(err)
	}
	return u
}

func within(got, want, rel float64) bool { return math.Abs(got-want) <= rel*math.Abs(want) }

// The worked checks of REFERENCES.md §7a. The log-linear forms are the
// generic U = c + d·log10(p/unit); the slopes and offsets are invented
// examples (no gauge's published characteristic), worked by hand:
//
//	A: d = 0.8 V/decade, c = 4.0 V at 1 mbar
//	   U = 5.6 V: 10^((5.6 − 4)/0.8) = 10^2 = 100 mbar = 1e4 Pa
//	   U = 2.4 V: 10^((2.4 − 4)/0.8) = 10^−2 mbar = 1 Pa
//	   U = 4.4 V: 10^(0.4/0.8) = 10^0.5 = 3.16228 mbar = 316.228 Pa
//	B: d = 0.5 V/decade, c = 5.0 V at 1 Pa
//	   U = 6.0 V: 10^(1/0.5) = 100 Pa;  U = 3.5 V: 10^(−1.5/0.5) = 1e-3 Pa
//	   U = 5.25 V: 10^(0.25/0.5) = 3.16228 Pa
//
// The linear forms are p = (U/U_FS)·p_FS (invented 1000 mbar full scale;
// the 10 Torr one as in §6a).
func TestTransferWorkedChecks(t *testing.T) {
	torr, mbar, pa := unit(t, "Torr"), unit(t, "mbar"), unit(t, "Pa")
	a := LogLinear{VoltsPerDecade: 0.8, OffsetVolts: 4, Unit: mbar}
	b := LogLinear{VoltsPerDecade: 0.5, OffsetVolts: 5, Unit: pa}
	for _, c := range []struct {
		name    string
		tr      Transfer
		u       float64
		wantPa  float64
		rel     float64
		comment string
	}{
		{"A 5.6 V", a, 5.6, 1e4, 1e-12, "100 mbar"},
		{"A 2.4 V", a, 2.4, 1, 1e-12, "0.01 mbar"},
		{"A 4.4 V", a, 4.4, 316.228, 1e-6, "3.16228 mbar"},
		{"B 6.0 V", b, 6.0, 100, 1e-12, "100 Pa"},
		{"B 3.5 V", b, 3.5, 1e-3, 1e-12, "1e-3 Pa"},
		{"B 5.25 V", b, 5.25, 3.16228, 1e-6, "3.16228 Pa"},
		{"linear 0-10 V", Linear{FullScaleVolts: 10, FullScale: 1000, Unit: mbar}, 2.5,
			25000, 1e-12, "FS 1000 mbar, U = 2.5 V -> 250 mbar"},
		{"linear 10 Torr", Linear{FullScaleVolts: 10, FullScale: 10, Unit: torr}, 6.0,
			799.934, 1e-6, "§6a: 6.0 V on 10 Torr FS -> 6.0 Torr = 799.934 Pa"},
	} {
		got, err := c.tr.Apply(c.u)
		if err != nil || !within(got, c.wantPa, c.rel) {
			t.Errorf("%s: Apply(%g) = %.10g Pa, %v; want %.10g Pa (%s)", c.name, c.u, got, err, c.wantPa, c.comment)
		}
	}
	// Exact form of the 10 Torr case: 6 × 101325/760 Pa (§1b, Torr = 101325/760 Pa).
	got, _ := Linear{FullScaleVolts: 10, FullScale: 10, Unit: torr}.Apply(6)
	if !within(got, 6*101325.0/760, 1e-12) {
		t.Errorf("10 Torr FS at 6 V = %.12g Pa, want %.12g", got, 6*101325.0/760)
	}
}

func TestLiveZeroLinear(t *testing.T) {
	// 2-10 V over 0-100 mbar: 6 V is half scale (common practice for live-zero outputs).
	got, err := Linear{ZeroVolts: 2, FullScaleVolts: 10, FullScale: 100, Unit: unit(t, "mbar")}.Apply(6)
	if err != nil || !within(got, 5000, 1e-12) {
		t.Errorf("Apply(6) = %g, %v; want 5000 Pa", got, err)
	}
}

func TestWindowMapsToQualities(t *testing.T) {
	// Invented characteristic and window (example A of TestTransferWorkedChecks,
	// valid from 0.4 to 9.6 V).
	tr := LogLinear{VoltsPerDecade: 0.8, OffsetVolts: 4, Unit: unit(t, "mbar"),
		Window: Window{Min: 0.4, Max: 9.6, Below: QualitySensorFault, Above: QualityOverRange}}
	for _, c := range []struct {
		u    float64
		want Quality
	}{{0.2, QualitySensorFault}, {0.4, QualityOK}, {9.6, QualityOK}, {9.9, QualityOverRange}, {math.NaN(), QualitySensorFault}} {
		_, err := tr.Apply(c.u)
		if q := QualityOf(err); q != c.want {
			t.Errorf("Apply(%g): quality %s (%v), want %s", c.u, q, err, c.want)
		}
	}
	// Explicit under-range below, and the defaults when Below/Above are unset.
	tr.Window.Below = QualityUnderRange
	if _, err := tr.Apply(0.2); QualityOf(err) != QualityUnderRange {
		t.Errorf("below with under-range set: %v", err)
	}
	tr.Window.Below, tr.Window.Above = QualityOK, QualityOK
	if _, err := tr.Apply(0.2); QualityOf(err) != QualitySensorFault {
		t.Errorf("below with defaults: %v, want sensor-fault", err)
	}
	if _, err := tr.Apply(11); QualityOf(err) != QualityOverRange {
		t.Errorf("above with defaults: %v, want over-range", err)
	}
}

func TestTableReproducesLogLinear(t *testing.T) {
	// Points typed from the invented example A (0.8 V/decade, 4.0 V at
	// 1 mbar): p = 10^((U − 4)/0.8) mbar gives 10^−3.75, 10^−2.5, 10^−0.625,
	// 10^1.25, 10^2.5 and 10^5 mbar at 1, 2, 3.5, 5, 6 and 8 V. Log10 p is
	// linear in U, so interpolating it must give the form back between the
	// points: at 4.4 V 10^0.5 = 3.16228 mbar, at 7.2 V 10^4 mbar.
	mbar := unit(t, "mbar")
	volts := []float64{1, 2, 3.5, 5, 6, 8}
	ps := []float64{math.Pow(10, -3.75), math.Pow(10, -2.5), math.Pow(10, -0.625), math.Pow(10, 1.25), math.Pow(10, 2.5), 1e5}
	tab, err := NewTable(volts, ps, mbar, Window{})
	if err != nil {
		t.Fatal(err)
	}
	for _, c := range []struct{ u, wantMbar float64 }{{1, math.Pow(10, -3.75)}, {4.4, 3.16227766}, {7.2, 1e4}, {8, 1e5}} {
		got, err := tab.Apply(c.u)
		if err != nil || !within(got, 100*c.wantMbar, 1e-8) {
			t.Errorf("table at %g V = %g Pa, %v; want %g Pa", c.u, got, err, 100*c.wantMbar)
		}
	}
	if _, err := tab.Apply(0.5); !errors.Is(err, ErrBelowRange) {
		t.Errorf("before first point: %v, want below range", err)
	}
	if _, err := tab.Apply(9); !errors.Is(err, ErrAboveRange) {
		t.Errorf("past last point: %v, want above range", err)
	}
}

func TestTableIsMonotone(t *testing.T) {
	// An S-shaped curve with uneven steps (invented demo points): the
	// interpolant must never turn back between them.
	volts := []float64{0.4, 1, 2, 3, 4, 5, 5.3, 5.6}
	ps := []float64{1e-3, 1e-2, 0.1, 0.5, 5, 100, 500, 1000}
	tab, err := NewTable(volts, ps, unit(t, "mbar"), Window{})
	if err != nil {
		t.Fatal(err)
	}
	prev := 0.0
	for u := 0.4; u <= 5.6; u += 0.001 {
		p, err := tab.Apply(u)
		if err != nil || p < prev {
			t.Fatalf("at %g V: %g after %g (%v); want non-decreasing", u, p, prev, err)
		}
		prev = p
	}
}

func TestTransferValidationNamesFields(t *testing.T) {
	err := LogLinear{Unit: unit(t, "Pa"), Window: Window{Min: 5, Max: 1}}.Validate()
	for _, want := range []string{"volts_per_decade", "valid_volts"} {
		if err == nil || !strings.Contains(err.Error(), want) {
			t.Errorf("Validate() = %v, want it to name %s", err, want)
		}
	}
	_, err = NewTable([]float64{1, 1, 2}, []float64{1, 2, -1}, Unit{}, Window{})
	for _, want := range []string{"points[1]: volts", "points[2]: pressure", "unit"} {
		if err == nil || !strings.Contains(err.Error(), want) {
			t.Errorf("NewTable error = %v, want it to name %q", err, want)
		}
	}
}
