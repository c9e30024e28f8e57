package calib

import (
	"errors"
	"fmt"
	"math"
	"slices"
	"strconv"
	"strings"
)

// A Dimension is the kind of quantity a unit measures.
type Dimension uint8

// The dimensions holdfast knows. Inside the program each is held in one base
// unit: pressure in Pa, volume in m³, throughput (leak rate, pV flow) in
// Pa·m³/s, temperature in °C, length in m, density in kg/m³, pumping speed
// in m³/s, time in s, voltage in V and resistance in Ω (the raw signals of
// thermocouples and resistance thermometers).
//
// Throughput is pV flow. Its units sccm and slm are standard cm³ (or L) per
// minute at 0 °C and 101325 Pa, ideal gas: 1 sccm = 101325 Pa × 1 cm³ / 60 s
// = 1.68875e-3 Pa·m³/s = 0.0168875 mbar·L/s. That pV equivalence holds for
// gas at 0 °C; the same flow of molecules at 20 °C carries 293.15/273.15
// times the pV. Other "standard" conditions (20 °C, 25 °C) are not accepted.
const (
	Pressure Dimension = iota + 1
	Volume
	Throughput
	Temperature
	Length
	Density
	Speed
	Time
	Voltage
	Resistance
)

// dimensionInfo gives each dimension its name, its base unit and an example
// of how to write a value, for error messages.
var dimensionInfo = [...]struct{ name, base, example string }{
	Pressure:    {"pressure", "Pa", "5e-3 mbar"},
	Volume:      {"volume", "m3", "30 L"},
	Throughput:  {"throughput", "Pa*m3/s", "1.2e-6 mbar*L/s"},
	Temperature: {"temperature", "C", "150 C"},
	Length:      {"length", "m", "6 cm"},
	Density:     {"density", "kg/m3", "870 kg/m3"},
	Speed:       {"speed", "m3/s", "80 L/s"},
	Time:        {"time", "s", "30 min"},
	Voltage:     {"voltage", "V", "4.096 mV"},
	Resistance:  {"resistance", "ohm", "138.51 ohm"},
}

// Dimensions lists every dimension in a fixed order.
func Dimensions() []Dimension {
	return []Dimension{Pressure, Volume, Throughput, Temperature, Length, Density, Speed, Time, Voltage, Resistance}
}

func (d Dimension) known() bool { return d >= Pressure && d <= Resistance }

// String returns the dimension's name: "pressure", "volume", "throughput",
// "temperature", "length", "density", "speed", "time", "voltage" or
// "resistance".
func (d Dimension) String() string {
	if d.known() {
		return dimensionInfo[d].name
	}
	return fmt.Sprintf("dimension(%d)", uint8(d))
}

// Base returns the unit that values of dimension d are held in inside the
// program (Pa for pressure, °C for temperature, and so on). It returns the
// zero Unit for an unknown dimension.
func (d Dimension) Base() Unit {
	if !d.known() {
		return Unit{}
	}
	u, err := ParseUnit(dimensionInfo[d].base, d)
	if err != nil {
		panic("calib: base unit missing from the table: " + err.Error())
	}
	return u
}

// example returns how a value of d is written, for error messages.
func (d Dimension) example() string {
	if d.known() {
		return dimensionInfo[d].example
	}
	return "a number and a unit"
}

// A Unit is one unit of one dimension. The zero Unit is not a unit: its
// ToSI and FromSI return NaN. Units compare equal with ==.
type Unit struct {
	Name string    // canonical name, as LookupUnit accepts it and --list shows it
	Dim  Dimension // what the unit measures

	symbol   string
	num, den float64 // factor to the base unit, as a ratio
	zero     float64 // reading of an affine unit (K, °F) at the base zero
}

// String returns the unit's canonical name.
func (u Unit) String() string { return u.Name }

// Symbol returns the unit as people print it: "m³", "°C", "mbar·L/s".
func (u Unit) Symbol() string {
	if u.symbol == "" {
		return u.Name
	}
	return u.symbol
}

// ToSI converts v, a value in u, to the dimension's base unit (see Dimension).
func (u Unit) ToSI(v float64) float64 {
	if u.den == 0 {
		return math.NaN()
	}
	x := v - u.zero
	r := x * u.num / u.den
	if math.IsInf(r, 0) && !math.IsInf(x, 0) {
		r = x * (u.num / u.den) // x·num overflowed; the ratio first may not
	}
	return r
}

// FromSI converts v, a value in the dimension's base unit, to u.
func (u Unit) FromSI(v float64) float64 {
	if u.den == 0 {
		return math.NaN()
	}
	r := v * u.den / u.num
	if math.IsInf(r, 0) && !math.IsInf(v, 0) {
		r = v * (u.den / u.num)
	}
	return r + u.zero
}

// LookupUnit returns the unit called name, in any dimension. It accepts the
// aliases in the table and the spellings described at Parse. A name with
// meanings in two dimensions ("micron": µmHg or µm) is an error here; use
// ParseUnit with the dimension wanted. The error for an unknown name lists
// every known unit.
func LookupUnit(name string) (Unit, error) {
	c, err := unitCandidates(name)
	if err != nil {
		return Unit{}, err
	}
	if len(c) > 1 {
		return Unit{}, fmt.Errorf("unit %q has two meanings: %s; write %s", name, describeUnits(c), spellOut(c))
	}
	return c[0], nil
}

// ParseUnit returns the unit called name that measures want. The error says
// when name is a unit of another dimension, and lists want's units when name
// is unknown.
func ParseUnit(name string, want Dimension) (Unit, error) {
	c, err := unitCandidates(name)
	if err != nil {
		if !want.known() {
			return Unit{}, err
		}
		switch {
		case errors.Is(err, errNoUnit):
			return Unit{}, fmt.Errorf("no unit given; %s units are %s", want, unitNames(want))
		case errors.Is(err, errUnknownUnit):
			return Unit{}, fmt.Errorf("unknown %s unit %q; %s units are %s", want, name, want, unitNames(want))
		}
		return Unit{}, err
	}
	for _, u := range c {
		if u.Dim == want {
			return u, nil
		}
	}
	return Unit{}, fmt.Errorf("%q is %s unit; want %s unit such as %q",
		name, dimArticle(c[0].Dim), dimArticle(want), unitOf(want.example()))
}

// Convert converts v from one unit to another of the same dimension,
// offsets included (temperatures). A name with two meanings takes the one
// that matches the other unit. Converting between dimensions is an error
// that names both; a temperature below absolute zero is an error.
func Convert(v float64, from, to string) (float64, error) {
	fc, err := unitCandidates(from)
	if err != nil {
		return 0, err
	}
	tc, err := unitCandidates(to)
	if err != nil {
		return 0, err
	}
	var pairs [][2]Unit
	for _, f := range fc {
		for _, t := range tc {
			if f.Dim == t.Dim {
				pairs = append(pairs, [2]Unit{f, t})
			}
		}
	}
	switch len(pairs) {
	case 0:
		return 0, fmt.Errorf("cannot convert %s (%s) to %s (%s); %s units are %s",
			from, fc[0].Dim, to, tc[0].Dim, fc[0].Dim, unitNames(fc[0].Dim))
	case 1:
	default:
		return 0, fmt.Errorf("%q and %q both have two meanings: %s; write %s", from, to, describeUnits(fc), spellOut(fc))
	}
	f, t := pairs[0][0], pairs[0][1]
	if math.IsNaN(v) || math.IsInf(v, 0) {
		return 0, fmt.Errorf("%g %s: not a finite number", v, from)
	}
	si := f.ToSI(v)
	if err := checkUnitSI(si, f); err != nil {
		return 0, fmt.Errorf("%g %s: %w", v, from, err)
	}
	out := t.FromSI(si)
	if math.IsInf(out, 0) {
		return 0, fmt.Errorf("%g %s: out of range in %s", v, from, t.Name)
	}
	return out, nil
}

// absoluteZero is 0 K in the base temperature unit, °C (SI brochure: t/°C = T/K − 273.15).
const absoluteZero = -273.15

// checkUnitSI rejects base values that no measurement can have: NaN, infinities
// and temperatures below absolute zero.
func checkUnitSI(si float64, u Unit) error {
	if math.IsNaN(si) || math.IsInf(si, 0) {
		return fmt.Errorf("out of range for %s", u.Dim)
	}
	// A little slack: −459.67 °F lands a rounding error away from −273.15 °C.
	if u.Dim == Temperature && si < absoluteZero-1e-9 {
		return fmt.Errorf("below absolute zero (%s)", Format(absoluteZero, u))
	}
	return nil
}

// Units returns the known units of dimension d in table order, the base
// unit first.
func Units(d Dimension) []Unit {
	var us []Unit
	for _, def := range unitTable {
		if def.dim == d {
			us = append(us, def.unit())
		}
	}
	return us
}

// Format writes si, a value in the base unit of u's dimension, in unit u for
// people to read: three significant digits, plain between 0.01 and 999,
// exponent form elsewhere, then the unit's symbol: "1.33e-03 mbar",
// "150 °C", "0.75 Torr".
func Format(si float64, u Unit) string {
	return unitFormatSig3(u.FromSI(si)) + " " + u.Symbol()
}

func unitFormatSig3(v float64) string {
	if v == 0 || math.IsNaN(v) || math.IsInf(v, 0) {
		return strconv.FormatFloat(v, 'g', -1, 64)
	}
	e := strconv.FormatFloat(v, 'e', 2, 64) // rounding first decides the decade
	exp, _ := strconv.Atoi(e[strings.IndexByte(e, 'e')+1:])
	if exp >= -2 && exp <= 2 {
		return strconv.FormatFloat(v, 'g', 3, 64)
	}
	return e
}

// unitNames lists the canonical names of d's units, comma-separated.
func unitNames(d Dimension) string {
	var names []string
	for _, u := range Units(d) {
		names = append(names, u.Name)
	}
	return strings.Join(names, ", ")
}

// allUnitNames lists every known unit grouped by dimension.
func allUnitNames() string {
	var groups []string
	for _, d := range Dimensions() {
		groups = append(groups, d.String()+": "+unitNames(d))
	}
	return strings.Join(groups, "; ")
}

// Lookup failures that ParseUnit rewords for the dimension it wants.
var (
	errNoUnit      = errors.New("no unit given")
	errUnknownUnit = errors.New("unknown unit")
)

// unitCandidates returns the units a name can mean: one, or one per
// dimension for names like "micron". It fails for an unknown name, a refused
// one (psig), and a name whose case was folded to reach two units of one
// dimension (mpa: mPa or MPa).
func unitCandidates(name string) ([]Unit, error) {
	n := normalizeUnitName(name)
	if n == "" {
		return nil, fmt.Errorf("%w; known units: %s", errNoUnit, allUnitNames())
	}
	if why, ok := refusedUnits[n]; ok {
		return nil, fmt.Errorf("unit %q not accepted: %s", name, why)
	}
	rows, exact := unitLookup.exact[n]
	if !exact {
		rows = unitLookup.folded[strings.ToLower(n)]
	}
	if len(rows) == 0 {
		return nil, fmt.Errorf("%w %q; known units: %s", errUnknownUnit, name, allUnitNames())
	}
	c := make([]Unit, len(rows))
	for i, r := range rows {
		c[i] = unitTable[r].unit()
	}
	for i := range c {
		for _, o := range c[i+1:] {
			if o.Dim == c[i].Dim {
				return nil, fmt.Errorf("unit %q could be %s or %s; write it with the right case", name, c[i].Name, o.Name)
			}
		}
	}
	slices.SortFunc(c, func(a, b Unit) int { return int(a.Dim) - int(b.Dim) })
	return c, nil
}

// describeUnits writes "micron (pressure, µmHg) or um (length, µm)".
func describeUnits(c []Unit) string {
	parts := make([]string, len(c))
	for i, u := range c {
		parts[i] = fmt.Sprintf("%s (%s, %s)", u.Name, u.Dim, u.Symbol())
	}
	return strings.Join(parts, " or ")
}

// spellOut suggests an unambiguous name for each meaning: `"umHg" or "um"`.
func spellOut(c []Unit) string {
	parts := make([]string, len(c))
	for i, u := range c {
		parts[i] = strconv.Quote(unambiguousName(u))
	}
	return strings.Join(parts, " or ")
}

// unambiguousName returns u's canonical name, or its first alias that means
// nothing else when the canonical name has meanings in other dimensions.
func unambiguousName(u Unit) string {
	if len(unitLookup.exact[u.Name]) == 1 {
		return u.Name
	}
	for _, d := range unitTable {
		if d.name != u.Name || d.dim != u.Dim {
			continue
		}
		for _, a := range d.aliases {
			if len(unitLookup.exact[a]) == 1 {
				return a
			}
		}
	}
	return u.Name
}

func dimArticle(d Dimension) string { return "a " + d.String() }

// unitOf returns the unit part of an example such as "5e-3 mbar".
func unitOf(example string) string {
	_, u, _ := strings.Cut(example, " ")
	return u
}
