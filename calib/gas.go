package calib

import (
	"fmt"
	"maps"
	"math"
	"slices"
	"strings"
)

// Gas names are chemical formulas as people write them ("N2", "Ar", "H2O")
// or "air"; GasName accepts common spellings too.
var gasAliases = map[string]string{
	"n2": "N2", "nitrogen": "N2", "air": "air", "o2": "O2", "oxygen": "O2", "co": "CO",
	"he": "He", "helium": "He", "ne": "Ne", "neon": "Ne", "ar": "Ar", "argon": "Ar",
	"kr": "Kr", "krypton": "Kr", "xe": "Xe", "xenon": "Xe", "h2": "H2", "hydrogen": "H2",
	"co2": "CO2", "h2o": "H2O", "water": "H2O", "ch4": "CH4", "methane": "CH4",
	"sf6": "SF6", "hg": "Hg", "mercury": "Hg", "c2h6": "C2H6", "ethane": "C2H6",
	"c3h8": "C3H8", "propane": "C3H8", "c4h10": "C4H10", "butane": "C4H10",
}

// GasName returns the canonical name of a gas, or an error listing the known ones.
func GasName(s string) (string, error) {
	if n, ok := gasAliases[strings.ToLower(strings.TrimSpace(s))]; ok {
		return n, nil
	}
	return "", fmt.Errorf("unknown gas %q (known: %s)", s, strings.Join(slices.Sorted(maps.Keys(ionSensitivity)), ", ")+", air")
}

// thermalFactor holds correction factors C for thermal-conductivity (Pirani)
// gauges calibrated for N₂/air: p_true = C·p_indicated, valid in the linear
// range only (about 1e-2 to 1 mbar, 1 to 100 Pa). They are typical values,
// from memory (the same numbers appear in several makers' tables, which are
// not sources here; REFERENCES.md §5a); no handbook or standard tabulates
// them, because they depend on the sensor's design. Above about 1–10 mbar
// no single factor works (argon reads far low near atmosphere). Use the
// gauge maker's curve, or a factor measured on the gauge, where it matters.
var thermalFactor = map[string]float64{
	"air": 1.0, "O2": 1.0, "CO": 1.0, "N2": 1.0,
	"He": 0.8, "Ne": 1.4, "Ar": 1.7, "Kr": 2.4, "Xe": 3, "H2": 0.5, "CO2": 0.9, "H2O": 0.5,
}

// ThermalSource says where thermalFactor's numbers come from.
const ThermalSource = "typical value for an N2-calibrated thermal-conductivity gauge in its linear range (about 1 to 100 Pa), from memory; factors depend on the sensor's design: use the gauge maker's curve"

// ionSensitivity holds relative sensitivities S/S(N₂) of Bayard–Alpert
// ionisation gauges: p_true = p_indicated/S. Source: CRC Handbook of
// Chemistry and Physics, "Relative sensitivity of Bayard-Alpert ionization
// gauges to various gases" (P. Redhead; the mean of 12 experimenters;
// REFERENCES.md §8, status C). Air is not in the table: 1.0 is the mean
// over its mole fractions (N₂ 0.781, O₂ 0.209, Ar 0.009, from memory),
// 0.781·1.00 + 0.209·0.96 + 0.009·1.4 = 0.995 (D), rounded. Individual
// gauges differ by up to ±15 %.
var ionSensitivity = map[string]float64{
	"N2": 1.00, "He": 0.18, "Ne": 0.31, "Ar": 1.4, "Kr": 1.9, "Xe": 2.7, "H2": 0.43,
	"O2": 0.96, "CO": 1.0, "CO2": 1.4, "H2O": 0.93, "CH4": 1.6, "SF6": 2.3, "Hg": 3.5,
	"C2H6": 2.6, "C3H8": 3.5, "C4H10": 4.3, "air": 1.0,
}

// IonSource says where ionSensitivity's numbers come from.
const IonSource = "relative sensitivity of a Bayard-Alpert gauge, mean of 12 experimenters, CRC Handbook of Chemistry and Physics (P. Redhead); single gauges differ by up to 15 %"

// A GasFactor is a gas correction with where its number comes from:
// p_true = Factor·p_indicated.
type GasFactor struct {
	Gas    string  // canonical name (GasName)
	Factor float64 // multiplies the indicated pressure
	Source string
}

// ThermalGas returns the gas factor of a thermal-conductivity gauge
// calibrated for N₂ reading gas.
func ThermalGas(gas string) (GasFactor, error) {
	c, err := ThermalGasFactor(gas)
	if err != nil {
		return GasFactor{}, err
	}
	n, _ := GasName(gas)
	return GasFactor{Gas: n, Factor: c, Source: ThermalSource}, nil
}

// IonGas returns the gas factor (1/S) of a hot-cathode ionisation gauge
// calibrated for N₂ reading gas.
func IonGas(gas string) (GasFactor, error) {
	s, err := IonSensitivity(gas)
	if err != nil {
		return GasFactor{}, err
	}
	n, _ := GasName(gas)
	return GasFactor{Gas: n, Factor: 1 / s, Source: fmt.Sprintf("1/S with S = %g: %s", s, IonSource)}, nil
}

// ThermalGasFactor returns the correction factor C for a thermal-conductivity
// gauge reading gas (p_true = C·p_indicated, linear range only).
func ThermalGasFactor(gas string) (float64, error) {
	n, err := GasName(gas)
	if err != nil {
		return 0, err
	}
	c, ok := thermalFactor[n]
	if !ok {
		return 0, fmt.Errorf("no thermal-conductivity gauge factor for %s (known: %s); give the factor yourself",
			n, strings.Join(slices.Sorted(maps.Keys(thermalFactor)), ", "))
	}
	return c, nil
}

// IonSensitivity returns the relative sensitivity S/S(N₂) of an ionisation
// gauge for gas (p_true = p_indicated/S).
func IonSensitivity(gas string) (float64, error) {
	n, err := GasName(gas)
	if err != nil {
		return 0, err
	}
	return ionSensitivity[n], nil
}

// A GasCorrection turns a reading made for the gauge's calibration gas into
// the pressure of another gas. Factor multiplies the reading; a Curve, when
// set, overrides Factor (it maps indicated to true pressure, both in Pa).
type GasCorrection struct {
	Factor float64
	Curve  *GasCurve
}

// Correct returns the true pressure for an indicated one.
func (g GasCorrection) Correct(indicated float64) float64 {
	if g.Curve != nil {
		return g.Curve.True(indicated)
	}
	return g.Factor * indicated
}

// A GasCurve is a user's correction table (indicated → true pressure, Pa)
// interpolated monotonically in log–log.
type GasCurve struct{ p *PCHIP }

// NewGasCurve builds a curve from pairs of indicated and true pressures
// (Pa), in increasing indicated pressure, both rising.
func NewGasCurve(indicated, truth []float64) (*GasCurve, error) {
	if len(indicated) != len(truth) || len(indicated) < 2 {
		return nil, fmt.Errorf("gas curve needs at least two (indicated, true) pairs, got %d and %d values", len(indicated), len(truth))
	}
	xs, ys := make([]float64, len(indicated)), make([]float64, len(truth))
	for i := range indicated {
		if !(indicated[i] > 0 && truth[i] > 0) {
			return nil, fmt.Errorf("gas curve pair %d: %g and %g Pa must be above zero", i+1, indicated[i], truth[i])
		}
		if i > 0 && !(truth[i] > truth[i-1]) {
			return nil, fmt.Errorf("gas curve pairs %d and %d: true pressure %g then %g Pa must rise", i, i+1, truth[i-1], truth[i])
		}
		xs[i], ys[i] = math.Log(indicated[i]), math.Log(truth[i])
	}
	p, err := NewPCHIP(xs, ys)
	if err != nil {
		return nil, fmt.Errorf("gas curve: %w", err)
	}
	return &GasCurve{p}, nil
}

// True returns the true pressure for an indicated one (Pa); beyond the table
// it continues along the end slope in log–log.
func (g *GasCurve) True(indicated float64) float64 {
	if !(indicated > 0) {
		return indicated
	}
	return math.Exp(g.p.At(math.Log(indicated)))
}
