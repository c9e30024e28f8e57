package drivers_test

import (
	"math"
	"strconv"
	"testing"

	"holdfast/drivers"
)

func TestParseNumberForms(t *testing.T) {
	// The forms the issue lists as printed by instruments, and the compact
	// mantissa-exponent form (common practice among vacuum controllers).
	for _, c := range []struct {
		in   string
		want float64
	}{
		{"1.23E-04", 1.23e-4}, {"+1.230E-4", 1.23e-4}, {" 7.5E+02", 750}, {"5e-3", 5e-3},
		{"750", 750}, {"-0.5", -0.5}, {".5", 0.5}, {"12.", 12}, {"1.23-04", 1.23e-4},
		{"4.5+2", 450}, {"-2.0-3", -2e-3}, {"1E5", 1e5}, {" +9.90000000E+37 ", 9.9e37},
	} {
		got, err := drivers.ParseNumber(c.in)
		if err != nil || got != c.want {
			t.Errorf("ParseNumber(%q) = %v, %v; want %v", c.in, got, err, c.want)
		}
	}
}

func TestParseNumberRefuses(t *testing.T) {
	for _, in := range []string{"", " ", "E5", "1.2.3", "0x1p-3", "inf", "NaN", "1_000", "1,5", "1.5 mbar",
		"1.2E", "1.2E+", "1.2-", "+", ".", "1e400", "--1", "1.2E-3x"} {
		if v, err := drivers.ParseNumber(in); err == nil {
			t.Errorf("ParseNumber(%q) = %v, want an error", in, v)
		}
	}
}

func FuzzParseNumber(f *testing.F) {
	for _, s := range []string{"1.23E-04", "+1.230E-4", " 7.5E+02", "1.23-04", "0x10", "1e", "-.5e-0"} {
		f.Add(s)
	}
	f.Fuzz(func(t *testing.T, s string) {
		v, err := drivers.ParseNumber(s)
		if err == nil && (math.IsNaN(v) || math.IsInf(v, 0)) {
			t.Fatalf("ParseNumber(%q) = %v; only finite numbers may pass", s, v)
		}
		if err != nil {
			return
		}
		// Whatever is accepted is a real number that prints back the same.
		back, err := drivers.ParseNumber(strconv.FormatFloat(v, 'E', -1, 64))
		if err != nil || back != v {
			t.Fatalf("round trip of %q: %v -> %v, %v", s, v, back, err)
		}
	})
}
