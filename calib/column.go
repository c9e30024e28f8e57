package calib

import (
	"errors"
	"fmt"
	"math"
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

// MercuryDensity returns the density of mercury (kg/m³) at t (°C) from the
// CRC Handbook specific-volume polynomial v = 0.073554 + 1.3245e-5·t +
// 1.22823e-9·t² mL/g, scaled so that 0 °C gives the conventional 13595.1.
func MercuryDensity(t float64) float64 {
	v := func(t float64) float64 { return 0.073554 + 1.3245e-5*t + 1.22823e-9*t*t }
	return 13595.1 * v(0) / v(t)
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
	if !(c.Density > 0) || math.IsInf(c.Density, 0) {
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
