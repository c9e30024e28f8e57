package alerts

import (
	"math"
	"strconv"
)

// A ReadingStep gives the step between two adjacent readings a gauge can show
// at pressure p (both in Pa): the resolution of its display or interface.
// A reading's quantisation error is then uniform over one step, of standard
// uncertainty step/√12 (JCGM 100:2008, GUM, F.2.2.1: 0.29·δx for a
// resolution δx).
type ReadingStep func(p float64) float64

// FixedStep returns the ReadingStep of readings given in fixed steps of q
// Pa, such as a fixed-point display.
func FixedStep(q float64) ReadingStep {
	return func(float64) float64 { return q }
}

// DigitsStep returns the ReadingStep of readings shown to digits significant
// digits in a unit of unit pascals (100 for mbar, 101325/760 for Torr), but
// never finer than floor Pa. Digits below 1 give floor alone.
func DigitsStep(digits int, unit, floor float64) ReadingStep {
	return func(p float64) float64 {
		v := math.Abs(p / unit)
		if digits < 1 || v == 0 || !isFinite(v) {
			return floor
		}
		return max(floor, unit*math.Pow(10, math.Floor(math.Log10(v))-float64(digits)+1))
	}
}

// detectStep returns the ReadingStep of readings that carry few significant
// digits (as when a unit conversion by a power of ten kept them), or nil
// when the values look continuous (10 or more significant digits).
func detectStep(p []float64) ReadingStep {
	digits := 0
	stride := max(1, len(p)/512)
	for i := 0; i < len(p); i += stride {
		v := math.Abs(p[i])
		if v == 0 {
			continue
		}
		d := significantDigits(v)
		if d == 0 {
			return nil
		}
		digits = max(digits, d)
	}
	if digits == 0 {
		return nil
	}
	return DigitsStep(digits, 1, 0)
}

// significantDigits returns the fewest significant digits (1 to 9) that
// give v back within a relative 1e-12, or 0 when none does.
func significantDigits(v float64) int {
	for d := 1; d <= 9; d++ {
		r, err := strconv.ParseFloat(strconv.FormatFloat(v, 'e', d-1, 64), 64)
		if err == nil && math.Abs(r-v) <= 1e-12*v {
			return d
		}
	}
	return 0
}
