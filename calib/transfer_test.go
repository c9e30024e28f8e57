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

// The worked checks of REFERENCES.md §7a (analogue outputs of active gauges;
// the forms are the makers' published ones, brands withheld).
func TestTransferWorkedChecks(t *testing.T) {
	torr, mbar := unit(t, "Torr"), unit(t, "mbar")
	for _, c := range []struct {
		name    string
		tr      Transfer
		u       float64
		wantPa  float64
		rel     float64
		comment string
	}{
		{"log 1 V/decade", LogLinear{VoltsPerDecade: 1, OffsetVolts: 4, Unit: torr}, 5.5,
			torr.ToSI(31.6228), 1e-6, "§7a: c = 4 (Torr), U = 5.5 V -> 31.6228 Torr"},
		{"log 0.6 V/decade", LogLinear{VoltsPerDecade: 0.6, OffsetVolts: 6.8, Unit: mbar}, 5.0,
			0.1, 1e-12, "§7a: 6.8 V <-> 1 mbar, U = 5.0 V -> 1.000e-3 mbar = 0.1 Pa"},
		{"linear 0-10 V", Linear{FullScaleVolts: 10, FullScale: 1000, Unit: mbar}, 2.5,
			25000, 1e-12, "§7a: FS 1000 mbar, U = 2.5 V -> 250 mbar"},
		{"linear 10 Torr", Linear{FullScaleVolts: 10, FullScale: 10, Unit: torr}, 6.0,
			799.934, 1e-6, "§7a / §6: 6.0 V on 10 Torr FS -> 6.0 Torr = 799.934 Pa"},
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
	tr := LogLinear{VoltsPerDecade: 1, OffsetVolts: 5.5, Unit: unit(t, "Pa"),
		Window: Window{Min: 0.5, Max: 10.2, Below: QualitySensorFault, Above: QualityOverRange}}
	for _, c := range []struct {
		u    float64
		want Quality
	}{{0.2, QualitySensorFault}, {0.5, QualityOK}, {10.2, QualityOK}, {10.5, QualityOverRange}, {math.NaN(), QualitySensorFault}} {
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
	// Points sampled from §7a's 1 V/decade form (c = 4, Torr): interpolating
	// log10 p must give that form back between the points (derived).
	torr := unit(t, "Torr")
	ref := LogLinear{VoltsPerDecade: 1, OffsetVolts: 4, Unit: torr}
	volts := []float64{1, 2, 3.5, 5, 6, 8}
	ps := make([]float64, len(volts))
	for i, u := range volts {
		ps[i] = math.Pow(10, u-4)
	}
	tab, err := NewTable(volts, ps, torr, Window{})
	if err != nil {
		t.Fatal(err)
	}
	for _, u := range []float64{1, 1.7, 3.2, 5.5, 7.9, 8} {
		got, err := tab.Apply(u)
		want, _ := ref.Apply(u)
		if err != nil || !within(got, want, 1e-9) {
			t.Errorf("table at %g V = %g Pa, %v; want %g", u, got, err, want)
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
