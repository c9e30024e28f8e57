package calib

import (
	"fmt"
	"math"
)

// Thermal transpiration: a capacitance gauge held warmer than the chamber
// reads high at low pressure, because in molecular flow the pressures in two
// connected volumes stand in the ratio √(T_gauge/T_chamber) (Knudsen 1909).
// At high pressure the ratio falls to 1. Temperatures here are in °C.

const zeroCelsius = 273.15 // K

func kelvin(name string, c float64) (float64, error) {
	k := c + zeroCelsius
	if !(k > 0) || math.IsInf(k, 0) {
		return 0, fmt.Errorf("%s temperature %g °C is below absolute zero or not a number", name, c)
	}
	return k, nil
}

// MolecularRatio returns p_gauge/p_chamber = √(T_gauge/T_chamber), the
// molecular-flow limit of thermal transpiration.
func MolecularRatio(gaugeC, chamberC float64) (float64, error) {
	tg, err := kelvin("gauge", gaugeC)
	if err != nil {
		return 0, err
	}
	tc, err := kelvin("chamber", chamberC)
	if err != nil {
		return 0, err
	}
	return math.Sqrt(tg / tc), nil
}

// SetinaGas holds one gas's constants for the Šetina correlation
// (Metrologia 36, 1999, eq. 4–5): A, B, C, viscosity Eta (Pa·s) and molar
// mass M (kg/mol).
type SetinaGas struct{ A, B, C, Eta, M float64 }

// SetinaGases are the constants by gas. A, B, C: J. Šetina, Metrologia 36
// (1999) 623, eq. 5 (the paper itself not read: from memory; REFERENCES.md
// §6, C2). Viscosity: CRC Handbook of Chemistry and
// Physics, "Viscosity of gases" (M. L. Huber and A. H. Harvey), η at 300 K
// (C); it enters only through the transition pressure p*, so its rise of
// about 0.2 %/K over a heated gauge's range moves the correction by far
// less than the constants' own spread. Molar masses: standard atomic
// weights.
var SetinaGases = map[string]SetinaGas{
	"N2": {0.0275, 0.321, 0.322, 17.9e-6, 0.0280134},
	"He": {0.0318, 0.252, 0.176, 19.9e-6, 0.0040026},
	"Ar": {0.0262, 0.275, 0.272, 22.7e-6, 0.039948},
	"H2": {0.0318, 0.319, 0.180, 8.9e-6, 0.0020159},
}

const gasConstant = 8.314462618 // J/(mol·K), CRC Handbook (exact in the 2019 SI)

// A Transpiration describes a heated gauge on a chamber: temperatures in °C
// and the inner diameter (m) of the tube between them.
type Transpiration struct {
	GaugeC, ChamberC float64
	Diameter         float64
}

func (tr Transpiration) check() (tg, tc float64, err error) {
	if tg, err = kelvin("gauge", tr.GaugeC); err != nil {
		return 0, 0, err
	}
	if tc, err = kelvin("chamber", tr.ChamberC); err != nil {
		return 0, 0, err
	}
	if !(tr.Diameter > 0 && tr.Diameter < 1) {
		return 0, 0, fmt.Errorf("tube diameter %g m: expected a few millimetres (above 0, below 1 m)", tr.Diameter)
	}
	return tg, tc, nil
}

// Setina returns p_gauge/p_chamber at gauge reading pGauge (Pa) by the Šetina
// correlation: (Aψ² + Bψ + C√ψ + √(Tg/Tc))/(Aψ² + Bψ + C√ψ + 1), ψ = p/p*,
// p* = η·c/d with c = √(3R·T̄/M), T̄ the mean of the two temperatures.
func (tr Transpiration) Setina(gas string, pGauge float64) (float64, error) {
	tg, tc, err := tr.check()
	if err != nil {
		return 0, err
	}
	n, err := GasName(gas)
	if err != nil {
		return 0, err
	}
	k, ok := SetinaGases[n]
	if !ok {
		return 0, fmt.Errorf("no Šetina constants for %s (known: N2, He, Ar, H2)", n)
	}
	if !(pGauge > 0) {
		return 0, fmt.Errorf("pressure %g Pa: must be above zero", pGauge)
	}
	c := math.Sqrt(3 * gasConstant * (tg + tc) / 2 / k.M)
	psi := pGauge / (k.Eta * c / tr.Diameter)
	s := k.A*psi*psi + k.B*psi + k.C*math.Sqrt(psi)
	return (s + math.Sqrt(tg/tc)) / (s + 1), nil
}

// TakaishiSensui returns p_gauge/p_chamber at chamber pressure pChamber (Pa)
// by T. Takaishi and Y. Sensui, Trans. Faraday Soc. 59 (1963) 2503:
//
//	p1/p2 = 1 + (√(T1/T2) − 1)/(A·X² + B·X + C·√X + 1),  X = 2·p2·d/(T1 + T2)
//
// with p2 in Torr, d in mm, T in K, A = 1.2e6·φ², B = 1.0e3·φ, C = 14·φ^½.
// The constants and φ (≈ 1 for N₂ and air) are from memory, unconfirmed
// (REFERENCES.md §6), so the daemon does not offer this form; Daudé,
// Elandaloussi and Janssen (arXiv 1308.6794) also find the Šetina form
// scales better with the gas.
func (tr Transpiration) TakaishiSensui(phi, pChamber float64) (float64, error) {
	tg, tc, err := tr.check()
	if err != nil {
		return 0, err
	}
	if !(phi > 0) || !(pChamber > 0) {
		return 0, fmt.Errorf("gas factor %g and pressure %g Pa must be above zero", phi, pChamber)
	}
	x := 2 * (pChamber / (101325.0 / 760)) * (tr.Diameter * 1000) / (tg + tc)
	den := 1.2e6*phi*phi*x*x + 1.0e3*phi*x + 14*math.Sqrt(phi)*math.Sqrt(x) + 1
	return 1 + (math.Sqrt(tg/tc)-1)/den, nil
}

// ChamberTakaishiSensui returns the chamber pressure (Pa) for a gauge
// reading, solving p_gauge = p_chamber·ratio(p_chamber) by fixed-point
// iteration (the ratio changes slowly with pressure, so it contracts fast).
func (tr Transpiration) ChamberTakaishiSensui(phi, pGauge float64) (float64, error) {
	p := pGauge
	for range 100 {
		r, err := tr.TakaishiSensui(phi, p)
		if err != nil {
			return 0, err
		}
		next := pGauge / r
		if math.Abs(next-p) <= 1e-13*p {
			return next, nil
		}
		p = next
	}
	return p, nil
}
