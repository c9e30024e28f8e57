package calib

import (
	"fmt"
	"math"
)

// StandardGravity is g_n = 9.80665 m/s² (3rd CGPM 1901), the acceleration the
// conventional mercury units use.
const StandardGravity = 9.80665

// GravityIGF80 returns normal gravity (m/s²) on the GRS80 ellipsoid at
// geodetic latitude lat (degrees), by the 1980 International Gravity Formula
// in Somigliana's closed form:
//
//	g = 9.7803267715·(1 + 0.001931851353·sin²φ)/√(1 − 0.0066943800229·sin²φ)
func GravityIGF80(lat float64) (float64, error) {
	if !(lat >= -90 && lat <= 90) {
		return 0, fmt.Errorf("latitude %g°: must be between -90 and 90 degrees", lat)
	}
	s := math.Sin(lat * math.Pi / 180)
	s2 := s * s
	return 9.7803267715 * (1 + 0.001931851353*s2) / math.Sqrt(1-0.0066943800229*s2), nil
}

// FreeAirGradient is the free-air decrease of gravity with height, 3.086e-6
// m/s² per metre (0.3086 mGal/m).
const FreeAirGradient = 3.086e-6

// LocalGravity returns gravity (m/s²) at latitude lat (degrees) and height
// (m above the ellipsoid, roughly sea level): IGF80 with the free-air
// correction. It ignores the rock between sea level and the site (the
// Bouguer term, about a third of the free-air term), which is below
// 1e-4 relative for sites under 1000 m.
func LocalGravity(lat, height float64) (float64, error) {
	if !(height > -500 && height < 9000) {
		return 0, fmt.Errorf("height %g m: expected -500 to 9000 m above sea level", height)
	}
	g, err := GravityIGF80(lat)
	return g - FreeAirGradient*height, err
}
