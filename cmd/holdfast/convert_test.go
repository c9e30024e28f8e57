package main

import (
	"bytes"
	"context"
	"errors"
	"flag"
	"strings"
	"testing"
)

// convertRun runs "holdfast convert args..." and returns stdout, stderr and
// the error main would print.
func convertRun(t *testing.T, args ...string) (string, string, error) {
	t.Helper()
	var out, errOut bytes.Buffer
	err := run(context.Background(), append([]string{"convert"}, args...), &out, &errOut)
	return out.String(), errOut.String(), err
}

func TestConvertCommand(t *testing.T) {
	for _, c := range []struct {
		args []string
		want string
	}{
		// 1 Torr = 101325/760 Pa = 133.322368 Pa (REFERENCES.md §1b), 6 significant digits.
		{[]string{"1", "Torr", "Pa"}, "133.322\n"},
		// 1 mbar·L/s = 0.1 Pa·m³/s (REFERENCES.md §3a).
		{[]string{"1.5e-6", "mbar*L/s", "Pa*m3/s"}, "1.5e-07\n"},
		// 1 atm = 14.69594877551345 psi (REFERENCES.md §1c).
		{[]string{"--digits", "3", "1", "atm", "psi"}, "14.7\n"},
		{[]string{"1", "atm", "psi", "--digits=10"}, "14.69594878\n"},
		// 17 digits print the double nearest §1c's 0.7500616827041697 in full.
		{[]string{"--digits", "17", "1", "mbar", "Torr"}, "0.75006168270416973\n"},
		// −40 °C = −40 °F (NIST SP 811 B.9 relation t/°F = 1.8·t/°C + 32); the minus sign is no flag.
		{[]string{"-40", "C", "F"}, "-40\n"},
		{[]string{"--", "-40", "F", "C"}, "-40\n"},
		{[]string{"0", "°C", "K"}, "273.15\n"}, // SI brochure: T/K = t/°C + 273.15
		// A quantity with its unit, then the target.
		{[]string{"150 mTorr", "mbar"}, "0.199984\n"},   // D: 150 × 0.133322368 Pa
		{[]string{"1 sccm", "mbar*L/s"}, "0.0168875\n"}, // §3a
		{[]string{"10 micron", "mTorr"}, "10\n"},        // µmHg/mTorr differs by 1.4e-7 (§1b note)
		{[]string{"25 micron", "mm"}, "0.025\n"},
		{[]string{"30 L", "m3"}, "0.03\n"},
	} {
		out, errOut, err := convertRun(t, c.args...)
		if err != nil {
			t.Errorf("convert %q: %v (stderr %q)", c.args, err, errOut)
		} else if out != c.want {
			t.Errorf("convert %q printed %q, want %q", c.args, out, c.want)
		}
	}
}

func TestConvertCommandErrors(t *testing.T) {
	for _, c := range []struct {
		args []string
		want []string // substrings of the error, which main prints after "holdfast: "
	}{
		{[]string{"5", "L", "mbar"}, []string{"convert: cannot convert L (volume) to mbar (pressure)", "m3, L, mL"}},
		{[]string{"5", "furlong", "Pa"}, []string{`convert: unknown unit "furlong"`, "pressure: Pa, mPa", "time: s"}},
		{[]string{"5", "Pa", "furlong"}, []string{`unknown unit "furlong"`, "known units"}},
		{[]string{"abc", "Pa", "mbar"}, []string{`convert: "abc" is not a finite number`}},
		{[]string{"NaN", "Pa", "mbar"}, []string{"not a finite number"}},
		{[]string{"5 L", "mbar"}, []string{`convert: "5 L" is a volume; want a pressure such as "5e-3 mbar"`}},
		{[]string{"5 L", "furlong"}, []string{`unknown unit "furlong"`}},
		{[]string{"1", "Torr"}, []string{`convert: "1" has no unit to convert from; want VALUE FROM TO`}},
		{[]string{}, []string{"got 0 arguments"}},
		{[]string{"1", "2", "3", "4"}, []string{"got 4 arguments"}},
		{[]string{"--digits", "0", "1", "Torr", "Pa"}, []string{"--digits must be 1 to 17, got 0"}},
		{[]string{"-300", "C", "K"}, []string{"below absolute zero"}},
		{[]string{"1", "psig", "Pa"}, []string{"gauge pressure"}},
		{[]string{"--list", "Pa"}, []string{"--list takes no arguments"}},
	} {
		_, _, err := convertRun(t, c.args...)
		if err == nil {
			t.Errorf("convert %q succeeded; want an error", c.args)
			continue
		}
		for _, w := range c.want {
			if !strings.Contains(err.Error(), w) {
				t.Errorf("convert %q error = %q, want it to contain %q", c.args, err, w)
			}
		}
	}
}

func TestConvertHelp(t *testing.T) {
	out, errOut, err := convertRun(t, "--help")
	if !errors.Is(err, flag.ErrHelp) {
		t.Fatalf("convert --help returned %v, want flag.ErrHelp (main exits 0 quietly)", err)
	}
	for _, w := range []string{"usage: holdfast convert", "-digits", "-list", "examples:", "holdfast convert 1 Torr Pa"} {
		if !strings.Contains(errOut, w) {
			t.Errorf("convert --help output lacks %q:\n%s", w, errOut)
		}
	}
	if out != "" {
		t.Errorf("convert --help wrote %q to stdout", out)
	}
	// A wrong argument count shows the same usage.
	if _, errOut, _ := convertRun(t, "1"); !strings.Contains(errOut, "examples:") {
		t.Errorf("convert 1 did not show the usage: %q", errOut)
	}
}

func TestConvertList(t *testing.T) {
	out, _, err := convertRun(t, "--list")
	if err != nil {
		t.Fatal(err)
	}
	for _, w := range []string{
		"pressure (held in Pa)", "throughput (held in Pa·m³/s)", "temperature (held in °C)", "time (held in s)",
		"Torr", "= 133.322368 Pa", // 101325/760 (REFERENCES.md §1b)
		"mbar*L/s", "= 0.1 Pa·m³/s", // §3a
		"sccm", "0 °C and 101325 Pa",
		"litre", "kgf/cm2",
	} {
		if !strings.Contains(out, w) {
			t.Errorf("convert --list lacks %q:\n%s", w, out)
		}
	}
	// Every dimension comes in order, each once.
	last := -1
	for _, d := range []string{"pressure", "volume", "throughput", "temperature", "length", "density", "speed", "time"} {
		i := strings.Index(out, "\n"+d+" (held in")
		if d == "pressure" {
			i = strings.Index(out, d+" (held in")
		}
		if i <= last {
			t.Errorf("dimension %s missing or out of order in --list", d)
		}
		last = i
	}
}
