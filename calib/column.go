package calib

import (
	"errors"
	"fmt"
	"math"
	"sync"
)

// A Column is a liquid-column manometer reading: p = ρ(t)·g·h.
//
// A closed-top column (vacuum above the liquid, as in a barometer, or one
// limb sealed and evacuated) measures absolute pressure; an open U-tube
// measures the difference between the pressures on its two limbs.
type Column struct {
	Height  float64 // m, difference of the two liquid levels
	Density float64 // kg/m³ at DensityAt
	// DensityAt is the temperature (°C) Density is quoted at.
	DensityAt float64
	// Temperature is the liquid's temperature (°C); used only with Expansion.
	Temperature float64
	// Expansion is the liquid's volumetric expansion coefficient (1/K); 0
	// takes the density as given.
	Expansion float64
	Gravity   float64 // m/s²; 0 means StandardGravity
	Open      bool    // an open U-tube: the result is a difference
}

// LiquidDensity returns ρ(t) = ρ₀/(1 + β·(t − t₀)) for a liquid of density
// rho0 at t0 (°C) with volumetric expansion coefficient beta (1/K).
func LiquidDensity(rho0, t0, beta, t float64) float64 { return rho0 / (1 + beta*(t-t0)) }

// The specific volume of mercury (mL/g) at 101.325 kPa against temperature
// (°C), typed from the table of the specific volume of mercury in the CRC
// Handbook of Chemistry and Physics (REFERENCES.md §2; the entries were read
// in a quoted excerpt of the table, status C2). Only ratios of entries are
// used, so the table's unit (the old millilitre) cancels.
var (
	mercuryTemps   = []float64{-10, 0, 10, 20, 30, 40, 90, 140, 190, 240, 290, 340}
	mercuryVolumes = []float64{0.0734205, 0.073554, 0.0736877, 0.0738215, 0.0739552, 0.0740891,
		0.0747594, 0.0754334, 0.0761128, 0.0767996, 0.0774958, 0.0782033}
)

// MercuryDensity20 is the density of mercury at 20 °C and 101.325 kPa,
// 13545.848 kg/m³ (K.-D. Sommer and J. Poziemski, "Density, thermal
// expansion and compressibility of mercury", Metrologia 30 (1993/94);
// REFERENCES.md §2, quoted from memory: the paper was not read here).
const MercuryDensity20 = 13545.848

// MercuryMinTemp and MercuryMaxTemp bound the temperatures (°C) the mercury
// table covers.
const (
	MercuryMinTemp = -10.0
	MercuryMaxTemp = 340.0
)

// mercuryCurve interpolates the specific volume with a monotone cubic. On a
// smooth curve of the table's shape its error is below 4e-7 relative from
// −10 to 40 °C (10 °C steps) and about 2e-6 above (50 °C steps).
var mercuryCurve = sync.OnceValue(func() *PCHIP {
	p, err := NewPCHIP(mercuryTemps, mercuryVolumes)
	if err != nil {
		panic("calib: mercury table: " + err.Error()) // the table is a constant
	}
	return p
})

// MercuryDensityAt returns the density of mercury (kg/m³) at t (°C) and
// 101.325 kPa: ρ(t) = ρ(20 °C)·v(20 °C)/v(t), with v the tabulated specific
// volume interpolated by a monotone cubic and ρ(20 °C) = MercuryDensity20.
// At 0 °C it gives 13595.11, the conventional 13595.1 to 1e-6. A t outside
// the table is an error naming the range.
func MercuryDensityAt(t float64) (float64, error) {
	if !(t >= MercuryMinTemp && t <= MercuryMaxTemp) {
		return 0, fmt.Errorf("mercury temperature %g °C: the density table covers %g to %g °C", t, MercuryMinTemp, MercuryMaxTemp)
	}
	return MercuryDensity20 * mercuryVolumes[3] / mercuryCurve().At(t), nil
}

// MercuryDensity is MercuryDensityAt without the error: outside the table it
// returns NaN, which Column.Pressure refuses as a density.
func MercuryDensity(t float64) float64 {
	rho, err := MercuryDensityAt(t)
	if err != nil {
		return math.NaN()
	}
	return rho
}

// ConventionalMercury is the conventional density of mercury at 0 °C (kg/m³)
// used by the mmHg and inHg units.
const ConventionalMercury = 13595.1

// DensityNow returns the liquid's density at its temperature.
func (c Column) DensityNow() float64 {
	if c.Expansion == 0 {
		return c.Density
	}
	return LiquidDensity(c.Density, c.DensityAt, c.Expansion, c.Temperature)
}

// Pressure returns ρ·g·h in Pa (absolute for a closed top, a difference for
// an open U-tube), or an error naming the input that cannot be right.
func (c Column) Pressure() (float64, error) {
	g := c.Gravity
	if g == 0 {
		g = StandardGravity
	}
	var errs []error
	if !(c.Height >= 0) || math.IsInf(c.Height, 0) {
		errs = append(errs, fmt.Errorf("height %g m: must be zero or more", c.Height))
	}
	switch {
	case math.IsNaN(c.Density):
		errs = append(errs, fmt.Errorf("density unknown: for mercury give a temperature from %g to %g °C", MercuryMinTemp, MercuryMaxTemp))
	case !(c.Density > 0) || math.IsInf(c.Density, 0):
		errs = append(errs, fmt.Errorf("density %g kg/m³: must be above zero", c.Density))
	}
	if !(g > 9.7 && g < 9.9) {
		errs = append(errs, fmt.Errorf("gravity %g m/s²: expected 9.7–9.9 m/s² on the Earth's surface", g))
	}
	if !(math.Abs(c.Expansion) < 0.01) {
		errs = append(errs, fmt.Errorf("expansion coefficient %g /K: liquids lie near 1e-4 to 1e-3 /K", c.Expansion))
	}
	if len(errs) > 0 {
		return 0, errors.Join(errs...)
	}
	return c.DensityNow() * g * c.Height, nil
}

// Kind says what the column's pressure means.
func (c Column) Kind() string {
	if c.Open {
		return "difference between the two limbs (open U-tube)"
	}
	return "absolute (closed-top column, vacuum above the liquid)"
}
