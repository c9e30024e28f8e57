package calib

import (
	"fmt"
	"math"
)

// A Baseline is a gauge's raw reading recorded at a known state: at
// atmosphere, or at a base vacuum far below its resolution (Pressure 0 for a
// linear gauge's zero).
type Baseline struct {
	Raw      float64 // what the gauge read
	Pressure float64 // what it should have read, Pa
}

// RawAt returns the raw signal the calibration maps to pressure p (Pa),
// searching by bisection across the valid raw range widened by its own
// width on each side. It is an error when p lies beyond that.
func (c *Calibration) RawAt(p float64) (float64, error) {
	if c.curve == nil {
		return 0, fmt.Errorf("calibration has no curve")
	}
	w := c.Valid.RawMax - c.Valid.RawMin
	lo, hi := c.Valid.RawMin-w, c.Valid.RawMax+w
	f := func(x float64) (float64, bool) {
		q, ok := c.curve.pressure(x)
		return q - p, ok
	}
	flo, ok1 := f(lo)
	fhi, ok2 := f(hi)
	for !ok1 && lo < c.Valid.RawMin { // the model may have no value far out: pull in
		lo = (lo + c.Valid.RawMin) / 2
		flo, ok1 = f(lo)
	}
	for !ok2 && hi > c.Valid.RawMax {
		hi = (hi + c.Valid.RawMax) / 2
		fhi, ok2 = f(hi)
	}
	if !ok1 || !ok2 || flo*fhi > 0 {
		return 0, fmt.Errorf("pressure %g Pa is beyond what this calibration reaches near its range %g…%g Pa", p, c.Valid.PressureMin, c.Valid.PressureMax)
	}
	for range 200 {
		mid := (lo + hi) / 2
		fm, ok := f(mid)
		if !ok || fm == 0 || hi-lo <= 1e-15*math.Max(1, math.Abs(mid)) {
			return mid, nil
		}
		if (fm < 0) == (flo < 0) {
			lo, flo = mid, fm
		} else {
			hi = mid
		}
	}
	return (lo + hi) / 2, nil
}

// Shifted is a calibration applied after a zero shift of the raw signal.
type Shifted struct {
	Cal   *Calibration
	Shift float64 // subtracted from raw before Cal applies
}

// Apply returns Cal.Apply(raw − Shift).
func (s Shifted) Apply(raw float64) (float64, error) { return s.Cal.Apply(raw - s.Shift) }

// WithBaseline returns a Transfer that shifts the raw signal so that the
// baseline's reading gives the baseline's pressure: a zero or offset
// adjustment recorded at a known state, applied on top of the calibration.
func (c *Calibration) WithBaseline(b Baseline) (Shifted, error) {
	want, err := c.RawAt(b.Pressure)
	if err != nil {
		return Shifted{}, fmt.Errorf("baseline at %g Pa: %w", b.Pressure, err)
	}
	return Shifted{Cal: c, Shift: b.Raw - want}, nil
}
