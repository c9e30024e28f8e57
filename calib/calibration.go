package calib

import (
	"encoding/json"
	"errors"
	"fmt"
	"math"
)

// CalibrationFormat is the version of the JSON form written by
// Calibration.MarshalJSON. Readers refuse other versions.
const CalibrationFormat = 1

// A Calibration is a fitted mapping from a gauge's raw signal to pressure
// (Pa). It implements Transfer. Its JSON form is
//
//	{"format": 1,                       // CalibrationFormat
//	 "model": "heat-loss",              // see Models
//	 "parameters": {"s0": …, …},        // model parameters, names in the model docs
//	 "knots": [{"raw": …, "pressure_pa": …}],   // pchip only: the interpolated nodes
//	 "points": [{"raw": …, "reference_pa": …, "line": …}],
//	 "fit": {…},                        // FitReport
//	 "valid": {"raw_min", "raw_max", "pressure_min_pa", "pressure_max_pa"},
//	 "uncertainty": {…},                // Uncertainty
//	 "reference_unit": "Torr", "gauge": "…", "note": "…"}   // optional
type Calibration struct {
	Model       string             `json:"model"`
	Parameters  map[string]float64 `json:"parameters"`
	Knots       []Knot             `json:"knots,omitempty"`
	Points      []Point            `json:"points"`
	Fit         FitReport          `json:"fit"`
	Valid       Range              `json:"valid"`
	Uncertainty Uncertainty        `json:"uncertainty"`
	// ReferenceUnit is the unit the reference column was written in (display only; points are in Pa).
	ReferenceUnit string `json:"reference_unit,omitempty"`
	Gauge         string `json:"gauge,omitempty"`
	Note          string `json:"note,omitempty"`

	curve curve // built from Model, Parameters and Knots
}

// A Knot is one node of an interpolating calibration.
type Knot struct {
	Raw      float64 `json:"raw"`
	Pressure float64 `json:"pressure_pa"`
}

// A Range is where a calibration is valid: the raw span of its points and
// the pressures the curve gives at those ends.
type Range struct {
	RawMin      float64 `json:"raw_min"`
	RawMax      float64 `json:"raw_max"`
	PressureMin float64 `json:"pressure_min_pa"`
	PressureMax float64 `json:"pressure_max_pa"`
}

// A FitReport says how well a calibration fits its points. Residuals are
// relative, (fitted − reference)/reference, in the order of the points.
type FitReport struct {
	Points     int       `json:"point_count"`
	Parameters int       `json:"parameter_count"`
	Method     string    `json:"method"`
	Residuals  []float64 `json:"relative_residuals"`
	RMS        float64   `json:"rms_relative"`
	Max        float64   `json:"max_relative"`
	// Scatter is the relative standard deviation of a point about the curve
	// (sqrt(Σr²/(n−m)), or the leave-one-out RMS for pchip); 0 if not estimable.
	Scatter float64 `json:"scatter_relative"`
	// LeaveOneOut holds pchip's leave-one-out relative residuals (interior points; 0 at the ends).
	LeaveOneOut []float64 `json:"leave_one_out_residuals,omitempty"`
	Notes       []string  `json:"notes,omitempty"`
}

// curve is one model's raw → pressure mapping.
type curve interface {
	// pressure returns p(raw) in Pa; ok is false where the model has no value.
	pressure(raw float64) (p float64, ok bool)
}

// wire is the JSON shape; it adds the format field.
type wire struct {
	Format int `json:"format"`
	calibrationFields
}

type calibrationFields Calibration // no methods: avoids recursion

// MarshalJSON writes the documented JSON form with the current format version.
func (c *Calibration) MarshalJSON() ([]byte, error) {
	return json.Marshal(wire{CalibrationFormat, calibrationFields(*c)})
}

// UnmarshalJSON reads the JSON form, refusing other format versions and
// parameters that do not describe a usable curve.
func (c *Calibration) UnmarshalJSON(b []byte) error {
	var w wire
	if err := json.Unmarshal(b, &w); err != nil {
		return err
	}
	if w.Format != CalibrationFormat {
		return fmt.Errorf("calibration format %d: this program reads format %d", w.Format, CalibrationFormat)
	}
	nc := Calibration(w.calibrationFields)
	cv, err := buildCurve(nc.Model, nc.Parameters, nc.Knots)
	if err != nil {
		return fmt.Errorf("calibration model %q: %w", nc.Model, err)
	}
	if !(nc.Valid.RawMin <= nc.Valid.RawMax) {
		return fmt.Errorf("calibration valid range: raw_min %g above raw_max %g", nc.Valid.RawMin, nc.Valid.RawMax)
	}
	nc.curve = cv
	*c = nc
	return nil
}

// Apply returns the pressure (Pa) for raw. Outside the valid raw range it
// returns an error wrapping ErrBelowRange or ErrAboveRange (by pressure),
// with the model extended as the value where the model has one (see
// Extend) and NaN where it has none, so callers can warn or refuse; it
// never returns a range limit in place of a value. Extended turns the
// extension into a live reading of quality extrapolated.
func (c *Calibration) Apply(raw float64) (float64, error) {
	if c.curve == nil {
		return 0, errors.New("calibration has no curve: build it with Fit or read it from JSON")
	}
	if math.IsNaN(raw) || math.IsInf(raw, 0) {
		return 0, fmt.Errorf("raw %g: %w", raw, ErrFault)
	}
	v := c.Valid
	p, xerr := c.Extend(raw)
	if raw >= v.RawMin && raw <= v.RawMax {
		if xerr != nil {
			return math.NaN(), xerr // a curve without a value inside its own range: read from a hand-edited file
		}
		return p, nil
	}
	if xerr != nil {
		p = math.NaN()
	}
	// Which pressure limit lies on the raw side we left?
	low := raw < v.RawMin
	if c.rising() != low { // e.g. rising curve and raw above range → pressure above
		return p, fmt.Errorf("raw %.6g outside the calibrated raw range %.6g…%.6g (pressure above %.4g Pa): %w",
			raw, v.RawMin, v.RawMax, v.PressureMax, ErrAboveRange)
	}
	return p, fmt.Errorf("raw %.6g outside the calibrated raw range %.6g…%.6g (pressure below %.4g Pa): %w",
		raw, v.RawMin, v.RawMax, v.PressureMin, ErrBelowRange)
}

// Extend returns the model's own pressure (Pa) at raw, inside or outside
// the valid range, or an error saying why the model has none there: at or
// below its zero signal (the heat-loss model's s0, the raw value where a
// linear model reaches 0 Pa) it wraps ErrBelowRange, at or above a heat-
// loss model's saturation ErrAboveRange.
func (c *Calibration) Extend(raw float64) (float64, error) {
	if c.curve == nil {
		return 0, errors.New("calibration has no curve: build it with Fit or read it from JSON")
	}
	switch cv := c.curve.(type) {
	case heatLossCurve:
		h := cv.h
		switch s := raw - h.S0; {
		case s <= 0:
			return math.NaN(), fmt.Errorf("raw %.6g is at or below the heat-loss model's zero signal s0 = %.6g (the signal at zero pressure): the model has no pressure there: %w",
				raw, h.S0, ErrBelowRange)
		case s >= h.A*h.Pt:
			return math.NaN(), fmt.Errorf("raw %.6g is at or above the heat-loss model's saturation s0 + a·p_t = %.6g: the model has no pressure there: %w",
				raw, h.S0+h.A*h.Pt, ErrAboveRange)
		}
	case linearCurve:
		if p, _ := cv.pressure(raw); !(p > 0) && cv.span != 0 {
			return math.NaN(), fmt.Errorf("raw %.6g is at or beyond the linear model's zero signal %.6g (where it reaches 0 Pa): the model has no pressure there: %w",
				raw, -cv.offset/cv.span, ErrBelowRange)
		}
	}
	p, ok := c.curve.pressure(raw)
	switch {
	case !ok || math.IsNaN(p):
		return math.NaN(), fmt.Errorf("raw %.6g: the %s model has no pressure there: %w", raw, c.Model, ErrBelowRange)
	case math.IsInf(p, 1):
		return math.NaN(), fmt.Errorf("raw %.6g: the %s model's pressure overflows: %w", raw, c.Model, ErrAboveRange)
	case !(p > 0):
		return math.NaN(), fmt.Errorf("raw %.6g: the %s model gives %g Pa, not a pressure: %w", raw, c.Model, p, ErrBelowRange)
	}
	return p, nil
}

// rising reports whether pressure increases with raw.
func (c *Calibration) rising() bool {
	lo, ok1 := c.curve.pressure(c.Valid.RawMin)
	hi, ok2 := c.curve.pressure(c.Valid.RawMax)
	if ok1 && ok2 && lo != hi {
		return hi > lo
	}
	return c.Model == ModelHeatLoss || len(c.Points) < 2 || direction(c.Points) >= 0
}

// buildCurve makes the evaluator for a model from its stored parameters.
func buildCurve(model string, params map[string]float64, knots []Knot) (curve, error) {
	get := func(names ...string) ([]float64, error) {
		out := make([]float64, len(names))
		for i, n := range names {
			v, ok := params[n]
			if !ok || math.IsNaN(v) || math.IsInf(v, 0) {
				return nil, fmt.Errorf("parameter %q missing or not a finite number", n)
			}
			out[i] = v
		}
		return out, nil
	}
	switch model {
	case ModelLinear:
		v, err := get("offset_pa", "pa_per_raw")
		if err != nil {
			return nil, err
		}
		return linearCurve{v[0], v[1]}, nil
	case ModelLogLinear:
		v, err := get("raw_at_1pa", "raw_per_decade")
		if err != nil {
			return nil, err
		}
		if v[1] == 0 {
			return nil, errors.New("raw_per_decade must not be zero")
		}
		return polyCurve{coef: []float64{-v[0] / v[1], 1 / v[1]}, mid: 0, half: 1}, nil
	case ModelPoly:
		return polyFromParams(params)
	case ModelHeatLoss:
		v, err := get("s0", "a_per_pa", "pt_pa")
		if err != nil {
			return nil, err
		}
		h := HeatLoss{S0: v[0], A: v[1], Pt: v[2]}
		return heatLossCurve{h}, h.Validate()
	case ModelPCHIP:
		return newPCHIPCurve(knots)
	}
	_, err := CanonicalModel(model)
	return nil, err
}

// linearCurve is p = offset + span·raw.
type linearCurve struct{ offset, span float64 }

func (l linearCurve) pressure(raw float64) (float64, bool) { return l.offset + l.span*raw, true }

// heatLossCurve inverts the heat-loss model.
type heatLossCurve struct{ h HeatLoss }

func (c heatLossCurve) pressure(raw float64) (float64, bool) {
	p, err := c.h.Apply(raw)
	return p, err == nil
}
