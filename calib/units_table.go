package calib

import (
	"strings"
)

// unitDef is one row of the unit table. A value v in the unit is
// (v − zero)·num/den in the dimension's base unit; num and den are kept apart
// so that exact ratios such as the Torr (101325/760 Pa) are rounded once, not
// twice.
type unitDef struct {
	name     string // canonical spelling, ASCII, what --list and errors show first
	symbol   string // for humans: "m³", "°C", "mbar·L/s"
	dim      Dimension
	num, den float64
	zero     float64 // affine units only (K, °F): the unit's reading at the base zero
	aliases  []string
	note     string // one line for --list
}

// unitTable is the complete list of units. Names are written after
// normalizeUnitName has run: "*" for any product sign, "3" for "³", "u" for
// "µ". A name may appear in two dimensions only when both meanings are in
// use (micron); lookups then need the dimension to decide.
//
// Factors: NIST SP 811 (2008) App. B.8; the standard atmosphere 101325 Pa
// (10th CGPM 1954, Res. 4); the conventional mercury column 13595.1 kg/m³ ×
// 9.80665 m/s²; the inch 0.0254 m and pound 0.45359237 kg (exact by
// definition). See REFERENCES.md §1 and §3a.
var unitTable = []unitDef{
	// pressure, base Pa
	{name: "Pa", symbol: "Pa", dim: Pressure, num: 1, den: 1, aliases: []string{"pascal", "pascals"}},
	{name: "mPa", symbol: "mPa", dim: Pressure, num: 1, den: 1e3, aliases: []string{"millipascal"}},
	{name: "hPa", symbol: "hPa", dim: Pressure, num: 100, den: 1},
	{name: "kPa", symbol: "kPa", dim: Pressure, num: 1e3, den: 1},
	{name: "MPa", symbol: "MPa", dim: Pressure, num: 1e6, den: 1},
	{name: "mbar", symbol: "mbar", dim: Pressure, num: 100, den: 1, aliases: []string{"millibar"}},
	{name: "bar", symbol: "bar", dim: Pressure, num: 1e5, den: 1},
	{name: "Torr", symbol: "Torr", dim: Pressure, num: 101325, den: 760, note: "101325/760 Pa"},
	{name: "mTorr", symbol: "mTorr", dim: Pressure, num: 101325, den: 760e3, aliases: []string{"millitorr"}},
	{name: "micron", symbol: "µmHg", dim: Pressure, num: 133322387415, den: 1e12,
		aliases: []string{"microns", "umHg", "micronHg"}, note: "conventional mercury, 0.133322387415 Pa"},
	{name: "mmHg", symbol: "mmHg", dim: Pressure, num: 133322387415, den: 1e9, note: "conventional mercury"},
	{name: "inHg", symbol: "inHg", dim: Pressure, num: 3386388640341, den: 1e9, note: "conventional mercury"},
	{name: "psi", symbol: "psi", dim: Pressure, num: 44482216152605, den: 6451600000,
		aliases: []string{"psia", "lbf/in2"}, note: "absolute"},
	{name: "atm", symbol: "atm", dim: Pressure, num: 101325, den: 1, note: "standard atmosphere"},
	{name: "kgf/cm2", symbol: "kgf/cm²", dim: Pressure, num: 980665, den: 10, note: "technical atmosphere"},

	// volume, base m³
	{name: "m3", symbol: "m³", dim: Volume, num: 1, den: 1},
	{name: "L", symbol: "L", dim: Volume, num: 1, den: 1e3,
		aliases: []string{"l", "litre", "liter", "litres", "liters", "dm3"}},
	{name: "mL", symbol: "mL", dim: Volume, num: 1, den: 1e6, aliases: []string{"millilitre", "milliliter"}},
	{name: "cm3", symbol: "cm³", dim: Volume, num: 1, den: 1e6, aliases: []string{"cc"}},
	{name: "ft3", symbol: "ft³", dim: Volume, num: 28316846592, den: 1e12, aliases: []string{"cuft"}},

	// throughput (pV flow, leak rate), base Pa·m³/s
	{name: "Pa*m3/s", symbol: "Pa·m³/s", dim: Throughput, num: 1, den: 1},
	{name: "Pa*L/s", symbol: "Pa·L/s", dim: Throughput, num: 1, den: 1e3, aliases: []string{"Pa*l/s"}},
	{name: "mbar*L/s", symbol: "mbar·L/s", dim: Throughput, num: 1, den: 10, aliases: []string{"mbar*l/s"}},
	{name: "Torr*L/s", symbol: "Torr·L/s", dim: Throughput, num: 101325, den: 760e3, aliases: []string{"Torr*l/s"}},
	{name: "atm*cc/s", symbol: "atm·cm³/s", dim: Throughput, num: 101325, den: 1e6,
		aliases: []string{"atm*cm3/s", "atm*mL/s", "atm*ml/s", "atm*cc/sec"}},
	{name: "sccm", symbol: "sccm", dim: Throughput, num: 101325, den: 60e6,
		note: "standard cm³/min at 0 °C and 101325 Pa"},
	{name: "slm", symbol: "slm", dim: Throughput, num: 101325, den: 60e3, aliases: []string{"slpm"},
		note: "standard L/min at 0 °C and 101325 Pa"},

	// temperature, base °C
	{name: "C", symbol: "°C", dim: Temperature, num: 1, den: 1,
		aliases: []string{"°C", "℃", "degC", "celsius"}},
	{name: "K", symbol: "K", dim: Temperature, num: 1, den: 1, zero: 273.15, aliases: []string{"kelvin"},
		note: "T/K = t/°C + 273.15"},
	{name: "F", symbol: "°F", dim: Temperature, num: 5, den: 9, zero: 32,
		aliases: []string{"°F", "℉", "degF", "fahrenheit"}, note: "t/°F = 1.8·t/°C + 32"},

	// length, base m
	{name: "m", symbol: "m", dim: Length, num: 1, den: 1, aliases: []string{"metre", "meter"}},
	{name: "cm", symbol: "cm", dim: Length, num: 1, den: 100},
	{name: "mm", symbol: "mm", dim: Length, num: 1, den: 1e3},
	{name: "um", symbol: "µm", dim: Length, num: 1, den: 1e6,
		aliases: []string{"micrometre", "micrometer", "micron", "microns"}},
	{name: "in", symbol: "in", dim: Length, num: 254, den: 1e4, aliases: []string{"inch", "inches"}},
	{name: "ft", symbol: "ft", dim: Length, num: 3048, den: 1e4, aliases: []string{"foot", "feet"}},

	// density, base kg/m³
	{name: "kg/m3", symbol: "kg/m³", dim: Density, num: 1, den: 1, aliases: []string{"g/L", "g/l"}},
	{name: "g/cm3", symbol: "g/cm³", dim: Density, num: 1e3, den: 1,
		aliases: []string{"g/cc", "g/mL", "g/ml", "kg/L", "kg/l"}},

	// pumping speed (volume flow), base m³/s
	{name: "m3/s", symbol: "m³/s", dim: Speed, num: 1, den: 1},
	{name: "L/s", symbol: "L/s", dim: Speed, num: 1, den: 1e3, aliases: []string{"l/s"}},
	{name: "m3/h", symbol: "m³/h", dim: Speed, num: 1, den: 3600},
	{name: "L/min", symbol: "L/min", dim: Speed, num: 1, den: 60e3, aliases: []string{"l/min"}},
	{name: "cfm", symbol: "ft³/min", dim: Speed, num: 28316846592, den: 60e12, aliases: []string{"ft3/min"}},

	// time, base s
	{name: "s", symbol: "s", dim: Time, num: 1, den: 1, aliases: []string{"sec", "second", "seconds"}},
	{name: "ms", symbol: "ms", dim: Time, num: 1, den: 1e3},
	{name: "min", symbol: "min", dim: Time, num: 60, den: 1, aliases: []string{"minute", "minutes"}},
	{name: "h", symbol: "h", dim: Time, num: 3600, den: 1, aliases: []string{"hr", "hour", "hours"}},
	{name: "d", symbol: "d", dim: Time, num: 86400, den: 1, aliases: []string{"day", "days"},
		note: "24 h"},

	// voltage, base V: a thermocouple's EMF as a meter or DAQ reports it
	{name: "V", symbol: "V", dim: Voltage, num: 1, den: 1, aliases: []string{"volt", "volts"}},
	{name: "mV", symbol: "mV", dim: Voltage, num: 1, den: 1e3, aliases: []string{"millivolt", "millivolts"}},
	{name: "uV", symbol: "µV", dim: Voltage, num: 1, den: 1e6, aliases: []string{"microvolt", "microvolts"}},

	// resistance, base Ω: a resistance thermometer's element
	{name: "ohm", symbol: "Ω", dim: Resistance, num: 1, den: 1, aliases: []string{"Ω", "Ω", "Ohm", "ohms"}},
	{name: "kohm", symbol: "kΩ", dim: Resistance, num: 1e3, den: 1, aliases: []string{"kΩ", "kΩ", "kOhm"}},
}

// refusedUnits are names people write that holdfast will not take, with the
// reason. Gauge (relative) pressures are the dangerous case: read as absolute
// they are off by one atmosphere.
var refusedUnits = map[string]string{
	"psig": "psig is a gauge pressure (relative to the local atmosphere); holdfast takes absolute pressures: " +
		"add the atmospheric pressure and write psi",
	"barg": "barg is a gauge pressure (relative to the local atmosphere); holdfast takes absolute pressures: " +
		"add the atmospheric pressure and write bar",
	"°K": `the kelvin takes no degree sign; write "K"`,
}

// unitIndex maps each normalized name, exactly and folded to lower case, to
// the table rows it names.
type unitIndex struct {
	exact, folded map[string][]int
}

var unitLookup = buildUnitIndex(unitTable)

func buildUnitIndex(table []unitDef) unitIndex {
	ix := unitIndex{exact: map[string][]int{}, folded: map[string][]int{}}
	for i, d := range table {
		for _, n := range append([]string{d.name}, d.aliases...) {
			ix.exact[n] = appendUnitRow(ix.exact[n], i)
			f := strings.ToLower(n)
			ix.folded[f] = appendUnitRow(ix.folded[f], i)
		}
	}
	return ix
}

func appendUnitRow(s []int, i int) []int {
	for _, j := range s {
		if j == i {
			return s
		}
	}
	return append(s, i)
}

// Aliases returns the other names the table accepts for u, besides the
// case variants every name gets.
func (u Unit) Aliases() []string {
	if d, ok := u.def(); ok {
		return append([]string(nil), d.aliases...)
	}
	return nil
}

// Note returns a short remark on u's definition ("conventional mercury",
// "standard cm³/min at 0 °C and 101325 Pa"), or "".
func (u Unit) Note() string {
	d, _ := u.def()
	return d.note
}

// Affine reports whether u has an offset from the base unit (K, °F), so
// that ToSI(0) is not 0 and differences do not convert like readings.
func (u Unit) Affine() bool { return u.zero != 0 }

func (u Unit) def() (unitDef, bool) {
	for _, d := range unitTable {
		if d.name == u.Name && d.dim == u.Dim {
			return d, true
		}
	}
	return unitDef{}, false
}

func (d unitDef) unit() Unit {
	return Unit{Name: d.name, Dim: d.dim, symbol: d.symbol, num: d.num, den: d.den, zero: d.zero}
}
