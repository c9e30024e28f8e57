package calib

import (
	"math"
	"strings"
	"testing"
)

// unitRelErr returns |got − want| / |want| (or |got| when want is 0).
func unitRelErr(got, want float64) float64 {
	if want == 0 {
		return math.Abs(got)
	}
	return math.Abs(got-want) / math.Abs(want)
}

// TestConvertPublishedValues checks conversions against published or
// definitional values. REFERENCES.md gives each row's status; the tolerance
// follows the digits the source prints.
func TestConvertPublishedValues(t *testing.T) {
	for _, c := range []struct {
		v        float64
		from, to string
		want     float64
		tol      float64 // relative
	}{
		// REFERENCES.md §1c worked checks (Torr = 101325/760 Pa; conventional mmHg = 13595.1·9.80665·1e-3 Pa;
		// NIST SP 811 B.8; 10th CGPM 1954 Res. 4).
		{1, "Torr", "Pa", 133.32236842105263, 1e-12},
		{760, "Torr", "Pa", 101325, 1e-12},
		{760, "mmHg", "Pa", 101325.01443540, 1e-12},
		{1, "mbar", "Torr", 0.7500616827041697, 1e-12},
		{1, "Pa", "Torr", 0.007500616827041697, 1e-12},
		{1, "atm", "psi", 14.69594877551345, 1e-12},
		{1, "atm", "inHg", 29.921255579748, 1e-12},
		{1, "kgf/cm2", "mbar", 980.665, 1e-12},
		// REFERENCES.md §1b factors to pascal (NIST SP 811 B.8 and the definitions in §1a).
		{1, "mbar", "Pa", 100, 1e-15},
		{1, "hPa", "mbar", 1, 1e-15}, // bar = 100 kPa by definition
		{1, "bar", "Pa", 100000, 1e-15},
		{1, "kPa", "Pa", 1000, 1e-15},
		{1, "MPa", "bar", 10, 1e-15},
		{1, "mPa", "Pa", 1e-3, 1e-15},
		{1, "atm", "Pa", 101325, 1e-15},
		{1, "mmHg", "Pa", 133.322387415, 1e-14},
		{1, "micron", "Pa", 0.133322387415, 1e-14}, // D: 1e-3 × mmHg
		{1, "mTorr", "Pa", 0.133322368421, 1e-11},  // D: 1e-3 × Torr, printed to 12 digits
		{1, "inHg", "Pa", 3386.388640341, 1e-14},
		{1, "psi", "Pa", 6894.757293168, 1e-12},
		{1, "kgf/cm2", "Pa", 98066.5, 1e-15},
		{1, "Torr", "mmHg", 0.999999857533699, 1e-14}, // D: (101325/760)/(13595.1·9.80665·1e-3), REFERENCES.md §1b
		// REFERENCES.md §3a leak-rate units (pV throughput).
		{1, "Pa*m3/s", "mbar*L/s", 10, 1e-15},
		{1, "mbar*L/s", "Pa*m3/s", 0.1, 1e-15},
		{1, "Torr*L/s", "Pa*m3/s", 0.133322368421, 1e-11},
		{1, "Torr*L/s", "mbar*L/s", 1.33322368421, 1e-11},
		{1, "atm*cc/s", "Pa*m3/s", 0.101325, 1e-15},
		{1, "atm*cc/s", "mbar*L/s", 1.01325, 1e-15},
		{1, "sccm", "Pa*m3/s", 1.68875e-3, 1e-15}, // 0 °C, 101325 Pa: D, 1e-6 m³/min × 101325 Pa / 60 s
		{1, "sccm", "mbar*L/s", 0.0168875, 1e-15}, // the same, in mbar·L/s
		{1, "Pa*m3/s", "sccm", 592.154, 1e-6},     // D, printed to 6 digits
		{1, "Pa*m3/s", "Torr*L/s", 7.50062, 1e-6},
		{1, "Pa*m3/s", "atm*cc/s", 9.86923, 1e-6},
		{1, "slm", "sccm", 1000, 1e-15}, // common practice: standard litre per minute
		{1, "Pa*L/s", "Pa*m3/s", 1e-3, 1e-15},
		// Volume: SI brochure, the litre is the cubic decimetre; 16 CFR 500.19: 1 foot = 30.48 cm exactly,
		// so 1 ft³ = 0.3048³ m³ = 0.028316846592 m³ (16 CFR 500.19 prints 0.028 316 8).
		{1, "L", "m3", 1e-3, 1e-15},
		{1, "mL", "cm3", 1, 1e-15},
		{30, "L", "cm3", 30000, 1e-15},
		{1, "ft3", "m3", 0.028316846592, 1e-15},
		{1, "ft3", "m3", 0.0283168, 2e-6},
		// Length: 16 CFR 500.19 (inch = 2.54 cm, foot = 30.48 cm, both exact).
		{1, "in", "cm", 2.54, 1e-15},
		{1, "ft", "m", 0.3048, 1e-15},
		{6, "cm", "mm", 60, 1e-15},
		{1, "um", "m", 1e-6, 1e-15},
		// Density: REFERENCES.md §2a, mercury 13.5951 g/cm³ = 13595.1 kg/m³ (0 °C, conventional).
		{13.5951, "g/cm3", "kg/m3", 13595.1, 1e-15},
		{1.0459, "g/mL", "kg/m3", 1045.9, 1e-15}, // dibutyl phthalate, same table
		// Pumping speed: REFERENCES.md §4, 1 m³/h = 1/3.6 L/s exactly.
		{1, "m3/h", "L/s", 1 / 3.6, 1e-15},
		{60, "L/min", "L/s", 1, 1e-15},
		{1, "cfm", "m3/s", 0.028316846592 / 60, 1e-15}, // D from the foot above
		// Time: SI brochure, non-SI units accepted for use with the SI (min, h, d; table number from memory).
		{1, "min", "s", 60, 0},
		{1, "h", "s", 3600, 0},
		{1, "d", "h", 24, 0},
		{250, "ms", "s", 0.25, 1e-15},
	} {
		got, err := Convert(c.v, c.from, c.to)
		if err != nil {
			t.Errorf("Convert(%g, %q, %q): %v", c.v, c.from, c.to, err)
			continue
		}
		if e := unitRelErr(got, c.want); e > c.tol {
			t.Errorf("Convert(%g, %q, %q) = %.17g, want %.17g (rel err %.2g > %.2g)", c.v, c.from, c.to, got, c.want, e, c.tol)
		}
	}
}

// TestSCCMStandardConditions checks the standard behind sccm: at 0 °C and
// 101325 Pa one sccm is 7.436e-7 mol/s (NIST, Berg & Tison 2002:
// 1 µmol/s = 1.3448 sccm; REFERENCES.md §3a). n = pV/(RT), R from the CRC
// Handbook (2019 SI, exact).
func TestSCCMStandardConditions(t *testing.T) {
	q, err := Convert(1, "sccm", "Pa*m3/s")
	if err != nil {
		t.Fatal(err)
	}
	const r = 8.314462618
	mol := q / (r * 273.15)
	if e := unitRelErr(mol, 1/1.3448e6); e > 1e-4 {
		t.Errorf("1 sccm = %.6g mol/s, want %.6g (Berg & Tison), rel err %.2g", mol, 1/1.3448e6, e)
	}
}

// TestTemperaturePoints checks the Celsius and Fahrenheit relations: t/°C =
// T/K − 273.15 (SI brochure; IUPAC Gold Book C00928), t/°F = 1.8·t/°C + 32
// and T/K = (t/°F + 459.67)/1.8 (NIST SP 811 (2008) App. B.9, temperature
// conversions).
func TestTemperaturePoints(t *testing.T) {
	for _, c := range []struct {
		v        float64
		from, to string
		want     float64
	}{
		{0, "C", "K", 273.15},
		{0, "C", "F", 32},
		{273.15, "K", "F", 32},
		{32, "F", "C", 0},
		{-40, "C", "F", -40},
		{-40, "F", "C", -40},
		{100, "C", "F", 212},
		{212, "F", "K", 373.15},
		{0, "K", "F", -459.67},
		{-459.67, "F", "K", 0},
		{150, "degC", "K", 423.15},
		{20, "°C", "K", 293.15},
	} {
		got, err := Convert(c.v, c.from, c.to)
		if err != nil {
			t.Errorf("Convert(%g, %q, %q): %v", c.v, c.from, c.to, err)
			continue
		}
		// Absolute tolerance: the offsets (273.15, 459.67) are not binary fractions.
		if math.Abs(got-c.want) > 1e-12 {
			t.Errorf("Convert(%g, %q, %q) = %.17g, want %g", c.v, c.from, c.to, got, c.want)
		}
	}
}

// TestRoundTripEveryUnit converts base → unit → base for every unit in the
// table (REFERENCES.md §1c: identity at rel 1e-14). For the affine
// temperature units the bound is relative to the larger of the two
// magnitudes, since adding and removing the offset cancels digits near zero.
func TestRoundTripEveryUnit(t *testing.T) {
	values := []float64{1e-9, 3.7e-4, 0.5, 1, 42.195, 101325, 6.02e8, 1e15, -2.5}
	for _, d := range Dimensions() {
		for _, u := range Units(d) {
			for _, v := range values {
				x := u.FromSI(v)
				back := u.ToSI(x)
				scale := math.Max(math.Abs(v), math.Abs(x))
				if math.Abs(back-v) > 1e-14*scale {
					t.Errorf("%s: %g → %.17g → %.17g, rel err %.2g", u.Name, v, x, back, math.Abs(back-v)/scale)
				}
			}
		}
	}
}

// TestUnitTable checks the table's own rules: one row per canonical name,
// names shared only across dimensions, case folding reaching two units of
// one dimension only for mPa/MPa, and base units first with factor 1.
func TestUnitTable(t *testing.T) {
	seen := map[string]bool{}
	for _, d := range unitTable {
		if seen[d.name] {
			t.Errorf("canonical name %q appears twice", d.name)
		}
		seen[d.name] = true
		if !(d.num > 0 && d.den > 0) || d.symbol == "" || !d.dim.known() {
			t.Errorf("row %q: bad factor, symbol or dimension: %+v", d.name, d)
		}
		if n := normalizeUnitName(d.name); n != d.name {
			t.Errorf("row %q is not in normal form (%q)", d.name, n)
		}
	}
	for name, rows := range unitLookup.exact {
		if len(rows) > 1 && unitTable[rows[0]].dim == unitTable[rows[1]].dim {
			t.Errorf("name %q means two units of one dimension", name)
		}
	}
	for name, rows := range unitLookup.folded {
		if len(rows) > 1 && name != "mpa" && unitTable[rows[0]].dim == unitTable[rows[1]].dim {
			t.Errorf("folded name %q reaches two units of one dimension: add it to the test or rename", name)
		}
	}
	for _, d := range Dimensions() {
		us := Units(d)
		if len(us) == 0 || us[0] != d.Base() || us[0].ToSI(1) != 1 || us[0].zero != 0 {
			t.Errorf("%s: base unit %v must come first with factor 1", d, d.Base())
		}
	}
}

func TestLookupUnit(t *testing.T) {
	for _, c := range []struct{ name, want string }{
		{"Pa", "Pa"}, {"PA", "Pa"}, {"torr", "Torr"}, {"TORR", "Torr"}, {"mPa", "mPa"}, {"MPa", "MPa"},
		{"mbar", "mbar"}, {"MBAR", "mbar"}, {"l", "L"}, {"litre", "L"}, {"cc", "cm3"}, {"cm³", "cm3"},
		{"m³", "m3"}, {"µm", "um"}, {"μm", "um"}, {"µmHg", "micron"}, {"°C", "C"}, {"degF", "F"},
		{"mbar·L/s", "mbar*L/s"}, {"mbar.l/s", "mbar*L/s"}, {"mbar L/s", "mbar*L/s"}, {"Pa m³/s", "Pa*m3/s"},
		{"atm cc/s", "atm*cc/s"}, {"kgf/cm²", "kgf/cm2"}, {" psi ", "psi"}, {"L / s", "L/s"},
	} {
		u, err := LookupUnit(c.name)
		if err != nil {
			t.Errorf("LookupUnit(%q): %v", c.name, err)
		} else if u.Name != c.want {
			t.Errorf("LookupUnit(%q) = %s, want %s", c.name, u.Name, c.want)
		}
	}
}

func TestLookupUnitErrors(t *testing.T) {
	for _, c := range []struct{ name, want string }{
		{"furlong", `unknown unit "furlong"; known units: pressure: Pa, mPa`},
		{"furlong", "time: s, ms, min, h, d"}, // every dimension is listed
		{"", "no unit given"},
		{"mpa", `unit "mpa" could be mPa or MPa; write it with the right case`},
		{"MPA", "could be mPa or MPa"},
		{"micron", `"micron" has two meanings: micron (pressure, µmHg) or um (length, µm); write "umHg" or "um"`},
		{"psig", "gauge pressure"},
		{"°K", `write "K"`},
	} {
		_, err := LookupUnit(c.name)
		if err == nil || !strings.Contains(err.Error(), c.want) {
			t.Errorf("LookupUnit(%q) error = %v, want it to contain %q", c.name, err, c.want)
		}
	}
}

func TestParseUnitDimension(t *testing.T) {
	if u, err := ParseUnit("micron", Length); err != nil || u.Name != "um" {
		t.Errorf("ParseUnit(micron, Length) = %v, %v; want um", u, err)
	}
	if u, err := ParseUnit("micron", Pressure); err != nil || u.Name != "micron" {
		t.Errorf("ParseUnit(micron, Pressure) = %v, %v; want micron", u, err)
	}
	for _, c := range []struct {
		name string
		dim  Dimension
		want string
	}{
		{"L", Pressure, `"L" is a volume unit; want a pressure unit such as "mbar"`},
		{"bogus", Volume, `unknown volume unit "bogus"; volume units are m3, L, mL, cm3, ft3`},
		{"", Time, "no unit given; time units are s, ms, min, h, d"},
		{"mpa", Pressure, "could be mPa or MPa"},
	} {
		_, err := ParseUnit(c.name, c.dim)
		if err == nil || !strings.Contains(err.Error(), c.want) {
			t.Errorf("ParseUnit(%q, %s) error = %v, want it to contain %q", c.name, c.dim, err, c.want)
		}
	}
}

func TestConvertErrors(t *testing.T) {
	for _, c := range []struct {
		v        float64
		from, to string
		want     string
	}{
		{5, "L", "mbar", "cannot convert L (volume) to mbar (pressure); volume units are m3, L, mL, cm3, ft3"},
		{5, "mbar", "furlong", `unknown unit "furlong"`},
		{-300, "C", "K", "below absolute zero (-273 °C)"},
		{-1, "K", "C", "below absolute zero"},
		{math.NaN(), "Pa", "mbar", "not a finite number"},
		{math.Inf(1), "Pa", "mbar", "not a finite number"},
		{1e308, "MPa", "Pa", "out of range"},
		{1e308, "Pa", "mPa", "out of range in mPa"},
		{1, "micron", "microns", "both have two meanings"},
	} {
		_, err := Convert(c.v, c.from, c.to)
		if err == nil || !strings.Contains(err.Error(), c.want) {
			t.Errorf("Convert(%g, %q, %q) error = %v, want it to contain %q", c.v, c.from, c.to, err, c.want)
		}
	}
	// A name with two meanings takes the one the other unit decides.
	if got, err := Convert(1, "micron", "mm"); err != nil || math.Abs(got-1e-3) > 1e-18 {
		t.Errorf("Convert(1, micron, mm) = %g, %v; want 0.001", got, err)
	}
	if got, err := Convert(1, "micron", "mTorr"); err != nil || unitRelErr(got, 1/0.999999857533699) > 1e-14 { // mmHg/Torr = 1/0.999999857533699 (§1b)
		t.Errorf("Convert(1, micron, mTorr) = %.17g, %v; want the mmHg/Torr ratio", got, err)
	}
}

func TestFormat(t *testing.T) {
	mbar, _ := LookupUnit("mbar")
	torr, _ := LookupUnit("Torr")
	c, _ := LookupUnit("C")
	f, _ := LookupUnit("F")
	leak, _ := LookupUnit("mbar*L/s")
	for _, x := range []struct {
		si   float64
		u    Unit
		want string
	}{
		{0.133322387415, mbar, "1.33e-03 mbar"}, // 1 µmHg (REFERENCES.md §1b)
		{100, torr, "0.75 Torr"},                // 1 mbar = 0.75006 Torr (§1c)
		{101325, mbar, "1.01e+03 mbar"},
		{99.96, mbar, "1 mbar"}, // rounds to 3 digits, stays plain
		{99960, mbar, "1.00e+03 mbar"},
		{150, c, "150 °C"},
		{-40, f, "-40 °F"},
		{0, mbar, "0 mbar"},
		{1.2e-7, leak, "1.20e-06 mbar·L/s"},
		{0.0123 * 100, mbar, "0.0123 mbar"},
	} {
		if got := Format(x.si, x.u); got != x.want {
			t.Errorf("Format(%g, %s) = %q, want %q", x.si, x.u.Name, got, x.want)
		}
	}
	if got := Format(1, Unit{}); !strings.HasPrefix(got, "NaN") {
		t.Errorf("Format with the zero Unit = %q, want NaN", got)
	}
}

func TestDimensionString(t *testing.T) {
	want := []string{"pressure", "volume", "throughput", "temperature", "length", "density", "speed", "time", "voltage", "resistance"}
	for i, d := range Dimensions() {
		if d.String() != want[i] {
			t.Errorf("Dimension %d String = %q, want %q", d, d.String(), want[i])
		}
	}
	if got := Dimension(0).String(); got != "dimension(0)" {
		t.Errorf("Dimension(0).String() = %q", got)
	}
	if got := Dimension(99).Base(); got != (Unit{}) {
		t.Errorf("Dimension(99).Base() = %v, want the zero Unit", got)
	}
}

func TestUnitDescriptions(t *testing.T) {
	l, _ := LookupUnit("L")
	if got := strings.Join(l.Aliases(), ","); !strings.Contains(got, "litre") {
		t.Errorf("L aliases = %q, want litre among them", got)
	}
	sccm, _ := LookupUnit("sccm")
	if !strings.Contains(sccm.Note(), "0 °C and 101325 Pa") {
		t.Errorf("sccm note = %q, want its standard conditions", sccm.Note())
	}
	k, _ := LookupUnit("K")
	pa, _ := LookupUnit("Pa")
	if !k.Affine() || pa.Affine() {
		t.Errorf("Affine: K %v, Pa %v; want true, false", k.Affine(), pa.Affine())
	}
	if (Unit{}).Aliases() != nil || (Unit{}).Note() != "" {
		t.Error("the zero Unit has aliases or a note")
	}
}
