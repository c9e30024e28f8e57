package calib

import (
	"fmt"
	"math"
	"strings"
	"testing"
	"time"
)

func TestParse(t *testing.T) {
	for _, c := range []struct {
		s    string
		dim  Dimension
		want float64 // base unit
	}{
		{"5e-3 mbar", Pressure, 0.5},                  // mbar = 100 Pa (REFERENCES.md §1b)
		{"2Torr", Pressure, 2 * 101325.0 / 760},       // Torr = 101325/760 Pa
		{"150 mTorr", Pressure, 150 * 101325 / 760e3}, // D: 19.9984 Pa
		{"1.2E-6 mbar*L/s", Throughput, 1.2e-7},       // §3a: 1 mbar·L/s = 0.1 Pa·m³/s
		{"1.2e-6 mbar·L/s", Throughput, 1.2e-7},
		{"1.2e-6 mbar l/s", Throughput, 1.2e-7},
		{"30 L", Volume, 0.03},
		{"30 litres", Volume, 0.03},
		{"100 cm³", Volume, 1e-4},
		{"150 C", Temperature, 150},
		{"150°C", Temperature, 150},
		{"300 K", Temperature, 300 - 273.15}, // SI brochure: t/°C = T/K − 273.15
		{"6 cm", Length, 0.06},
		{"25 µm", Length, 25e-6},
		{"25 micron", Length, 25e-6},
		{"870 kg/m3", Density, 870}, // REFERENCES.md §2a example oil
		{"13.5951 g/cm³", Density, 13595.1},
		{"80 L/s", Speed, 0.08},
		{"30 min", Time, 1800},
		{"10 micron", Pressure, 1.33322387415}, // §3b furnace check: 10 µmHg
		{"  +1_000 Pa  ", Pressure, 1000},
		{"0x1p-2 bar", Pressure, 25000},
		{".5 atm", Pressure, 50662.5},
		{"-40 F", Temperature, -40},
		{"0 Pa", Pressure, 0},
		{"1e-400 Pa", Pressure, 0}, // underflows to zero, as strconv.ParseFloat rounds it
	} {
		got, err := Parse(c.s, c.dim)
		if err != nil {
			t.Errorf("Parse(%q, %s): %v", c.s, c.dim, err)
			continue
		}
		if math.Abs(got-c.want) > 1e-14*math.Max(1, math.Abs(c.want)) {
			t.Errorf("Parse(%q, %s) = %.17g, want %.17g", c.s, c.dim, got, c.want)
		}
	}
}

func TestParseErrors(t *testing.T) {
	for _, c := range []struct {
		s    string
		dim  Dimension
		want string
	}{
		{"5 L", Pressure, `"5 L" is a volume; want a pressure such as "5e-3 mbar"`},
		{"5 furlong", Length, `"5 furlong": unknown length unit "furlong"; length units are m, cm, mm, um, in, ft`},
		{"", Pressure, `empty value; want a pressure such as "5e-3 mbar"`},
		{"   ", Volume, `empty value; want a volume such as "30 L"`},
		{"mbar", Pressure, `"mbar" has no number; want a pressure such as "5e-3 mbar"`},
		{"1e-3", Pressure, `"1e-3" has no unit; want a pressure such as "5e-3 mbar"`},
		{"NaN mbar", Pressure, "not a finite number"},
		{"-Inf Pa", Pressure, "not a finite number"},
		{"1,5 mbar", Pressure, `write the decimal point as "."`},
		{"1e999 Pa", Pressure, "number out of range"},
		{"1e308 MPa", Pressure, "out of range for pressure"},
		{"1__0 Pa", Pressure, `"1__0" is not a number`},
		{"0x10 Pa", Pressure, `"0x10" is not a number`}, // hex floats need a p exponent
		{"2 psig", Pressure, "gauge pressure"},
		{"3 mpa", Pressure, "could be mPa or MPa"},
		{"-300 C", Temperature, "below absolute zero"},
		{"1 micron", Volume, `is a pressure; want a volume`},
		{"1 sccm", Speed, `"1 sccm" is a throughput; want a speed such as "80 L/s"`},
	} {
		_, err := Parse(c.s, c.dim)
		if err == nil || !strings.Contains(err.Error(), c.want) {
			t.Errorf("Parse(%q, %s) error = %v, want it to contain %q", c.s, c.dim, err, c.want)
		}
	}
}

func TestParseDuration(t *testing.T) {
	for _, c := range []struct {
		s    string
		want time.Duration
	}{
		{"1s", time.Second}, // Go syntax, time.ParseDuration
		{"250ms", 250 * time.Millisecond},
		{"1h30m", 90 * time.Minute},
		{"-1.5h", -90 * time.Minute},
		{"0", 0},
		{"30 min", 30 * time.Minute}, // SI brochure: 1 min = 60 s, 1 h = 3600 s, 1 d = 86400 s
		{"2 h", 2 * time.Hour},
		{"2d", 48 * time.Hour},
		{"1.5 days", 36 * time.Hour},
		{"1d12h", 36 * time.Hour},
		{"-1d12h", -36 * time.Hour},
		{"30d", 720 * time.Hour},
		{"0.1 s", 100 * time.Millisecond},
		{"1e-9 s", time.Nanosecond},
	} {
		got, err := ParseDuration(c.s)
		if err != nil {
			t.Errorf("ParseDuration(%q): %v", c.s, err)
		} else if got != c.want {
			t.Errorf("ParseDuration(%q) = %v, want %v", c.s, got, c.want)
		}
	}
	for _, c := range []struct{ s, want string }{
		{"30 L", `"30 L" is a volume; want a time such as "30 min"`},
		{"30", "has no unit"},
		{"", "empty value"},
		{"1d-5h", "unknown time unit"},
		{"1e6 d", "out of range"},
		{"200000d", "out of range"},
		{"106751d23h48m", "out of range"},
	} {
		_, err := ParseDuration(c.s)
		if err == nil || !strings.Contains(err.Error(), c.want) {
			t.Errorf("ParseDuration(%q) error = %v, want it to contain %q", c.s, err, c.want)
		}
	}
}

// FuzzParse feeds Parse arbitrary text: it must not panic, and whatever it
// accepts must be finite. Text built as "<number> <unit>" must come back as
// the unit's ToSI of the number.
func FuzzParse(f *testing.F) {
	for _, s := range []string{"5e-3 mbar", "2Torr", "1.2e-6 mbar*L/s", "30 L", "150 °C", "0x1p3 Pa", "1_0 s",
		"", "mbar", "1e-3", "NaN Pa", "1,5 mbar", "-1e308 psi", "µmHg", "1 m³/h"} {
		f.Add(s, 1.0, uint8(1))
	}
	f.Fuzz(func(t *testing.T, s string, v float64, pick uint8) {
		for _, d := range Dimensions() {
			if x, err := Parse(s, d); err == nil && (math.IsNaN(x) || math.IsInf(x, 0)) {
				t.Errorf("Parse(%q, %s) = %g with no error", s, d, x)
			}
		}
		if math.IsNaN(v) || math.IsInf(v, 0) {
			return
		}
		u := unitTable[int(pick)%len(unitTable)].unit()
		text := fmt.Sprintf("%v %s", v, u.Name)
		got, err := Parse(text, u.Dim)
		want := u.ToSI(v)
		if err != nil {
			if !math.IsInf(want, 0) && !(u.Dim == Temperature && want < absoluteZero) {
				t.Errorf("Parse(%q): %v", text, err)
			}
			return
		}
		if got != want {
			t.Errorf("Parse(%q) = %.17g, want %.17g", text, got, want)
		}
	})
}

// BenchmarkParse measures parsing a typical config value.
func BenchmarkParse(b *testing.B) {
	for b.Loop() {
		if _, err := Parse("1.2e-6 mbar*L/s", Throughput); err != nil {
			b.Fatal(err)
		}
	}
}

// A percentage reads as a fraction: 5 % is 5/100 (NIST SP 811, §7.10.2:
// the symbol % stands for the number 0.01).
func TestParsePercent(t *testing.T) {
	for _, c := range []struct {
		in   string
		want float64
		ok   bool
	}{
		{"5%", 0.05, true}, {" 0.5 % ", 0.005, true}, {"100%", 1, true}, {"-2%", -0.02, true},
		{"5", 0, false}, {"%", 0, false}, {"five%", 0, false}, {"NaN%", 0, false}, {"Inf%", 0, false},
	} {
		got, ok := ParsePercent(c.in)
		if ok != c.ok || math.Abs(got-c.want) > 1e-15 {
			t.Errorf("ParsePercent(%q) = %g, %v; want %g, %v", c.in, got, ok, c.want, c.ok)
		}
	}
}
