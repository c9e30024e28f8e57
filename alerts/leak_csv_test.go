package alerts

import (
	"math"
	"strings"
	"testing"
)

func TestReadRiseCSV(t *testing.T) {
	in := "\ufeff# chamber B, valve closed at 12:00\r\n time_s , pressure \r\n\r\n0,1.20e-3\r\n# a remark\r\n1.5, 1.25e-3\r\n3,0.00130\r\n"
	rec, err := ReadRiseCSV(strings.NewReader(in), "rise.csv")
	if err != nil {
		t.Fatal(err)
	}
	if got, want := rec.Time, []float64{0, 1.5, 3}; !equalFloats(got, want) {
		t.Errorf("times %v, want %v", got, want)
	}
	if got, want := rec.Pressure, []float64{1.2e-3, 1.25e-3, 1.3e-3}; !equalFloats(got, want) {
		t.Errorf("pressures %v, want %v", got, want)
	}
	// "1.20e-3" and "1.25e-3" step 1e-5, "0.00130" too; 3 significant digits.
	if rec.Digits != 3 || math.Abs(rec.Step-1e-5) > 1e-20 {
		t.Errorf("step %g, digits %d; want 1e-05 and 3", rec.Step, rec.Digits)
	}
	// In mbar (100 Pa), 1.25e-3 mbar has a step of 1e-5 mbar = 1e-3 Pa.
	if got := rec.ReadingStep(100)(0.125); math.Abs(got-1e-3) > 1e-15 {
		t.Errorf("ReadingStep(100)(0.125 Pa) = %g Pa, want 1e-3", got)
	}
}

func equalFloats(a, b []float64) bool {
	if len(a) != len(b) {
		return false
	}
	for i := range a {
		if a[i] != b[i] {
			return false
		}
	}
	return true
}

func TestReadRiseCSVReportsEveryBadLine(t *testing.T) {
	for _, c := range []struct {
		name, in string
		want     []string
	}{
		{"header", "time,p\n0,1\n", []string{`r.csv:1: header is "time,p", want "time_s,pressure"`}},
		{"empty", "# nothing\n", []string{`r.csv: no header line`}},
		{"lines", "time_s,pressure\n0,1\nx,2\n3,NaN\n4\n5,1,2\n6,1e-3 mbar\n", []string{
			`r.csv:3: time "x" is not a number of seconds`,
			`r.csv:4: pressure "NaN" is not a number`,
			`r.csv:5: 1 fields, want 2 separated by a comma (time_s,pressure)`,
			`r.csv:6: 3 fields, want 2`,
			`r.csv:7: pressure "1e-3 mbar" is not a number`,
		}},
	} {
		_, err := ReadRiseCSV(strings.NewReader(c.in), "r.csv")
		if err == nil {
			t.Errorf("%s: no error", c.name)
			continue
		}
		for _, w := range c.want {
			if !strings.Contains(err.Error(), w) {
				t.Errorf("%s: error\n%v\nlacks %q", c.name, err, w)
			}
		}
	}
}

// Reading steps: a reading's last digit sets its resolution; the GUM takes
// its standard uncertainty as step/√12 (JCGM 100:2008 F.2.2.1), applied in
// the analysis, not here.
func TestReadingSteps(t *testing.T) {
	for _, c := range []struct {
		s      string
		step   float64
		digits int
	}{
		{"0.0120", 1e-4, 3}, {"1.23e-3", 1e-5, 3}, {"150", 1, 3}, {"-2.5E+2", 10, 2}, {"0", 1, 0},
		{"0x1p-2", 0, -1},
	} {
		step, d := decimalStep(c.s)
		if d != c.digits || math.Abs(step-c.step) > 1e-12*c.step {
			t.Errorf("decimalStep(%q) = %g, %d; want %g, %d", c.s, step, d, c.step, c.digits)
		}
	}
	torr := 101325.0 / 760
	if got, want := DigitsStep(3, torr, 0)(1.23*torr), 0.01*torr; math.Abs(got-want) > 1e-12 {
		t.Errorf("DigitsStep(3, Torr) at 1.23 Torr = %g Pa, want %g (0.01 Torr)", got, want)
	}
	if got := DigitsStep(3, 1, 1e-3)(1.5e-3); got != 1e-3 {
		t.Errorf("DigitsStep floor: %g, want 1e-3", got)
	}
	if s := detectStep([]float64{0.12, 0.13, 0.0098}); s == nil || math.Abs(s(0.12)-0.01) > 1e-15 {
		t.Errorf("detectStep of 2-digit values: step at 0.12 = %v, want 0.01", s)
	}
	if s := detectStep([]float64{0.1234567891234, 0.2}); s != nil {
		t.Error("detectStep of continuous values found a step")
	}
}

// A spreadsheet's export: quoted fields, CRLF, a byte-order mark and the
// unit in the header. The unit comes back so the caller need not guess it.
func TestReadRiseCSVSpreadsheetExport(t *testing.T) {
	in := "\ufeff\"time_s\",\"pressure_mbar\"\r\n\"0\",\"1.20E-03\"\r\n\"1.5\",\"1.25E-03\"\r\n\"3\",\"1.30E-03\"\r\n"
	rec, err := ReadRiseCSV(strings.NewReader(in), "export.csv")
	if err != nil {
		t.Fatal(err)
	}
	if got, want := rec.Pressure, []float64{1.2e-3, 1.25e-3, 1.3e-3}; !equalFloats(got, want) {
		t.Errorf("pressures %v, want %v", got, want)
	}
	// 1 mbar = 100 Pa (NIST SP 811, Appendix B.8: bar = 1e5 Pa).
	if rec.Unit.Name != "mbar" || rec.Unit.ToSI(1) != 100 {
		t.Errorf("unit %q (1 = %g Pa), want mbar (100 Pa)", rec.Unit.Name, rec.Unit.ToSI(1))
	}
	plain, err := ReadRiseCSV(strings.NewReader("time_s,pressure\n0,1\n1,2\n"), "plain.csv")
	if err != nil || plain.Unit.Name != "" {
		t.Errorf("header without a unit: unit %q, err %v; want none", plain.Unit.Name, err)
	}
	for _, c := range []struct{ in, want string }{
		{"time_s,pressure_mbr\n0,1\n", `r.csv:1: header column "pressure_mbr": unknown pressure unit "mbr"`},
		{"time_s,pressure_L\n0,1\n", `r.csv:1: header column "pressure_L"`},
		{"time_s,pressure\n\"0,1\n", `r.csv:2:`},
	} {
		if _, err := ReadRiseCSV(strings.NewReader(c.in), "r.csv"); err == nil || !strings.Contains(err.Error(), c.want) {
			t.Errorf("%q: error %v, want %q", c.in, err, c.want)
		}
	}
}
