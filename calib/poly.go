package calib

import (
	"errors"
	"fmt"
	"math"
	"strconv"

	"gonum.org/v1/gonum/mat"
)

// lstsq solves the overdetermined system rows·x ≈ y in the least-squares
// sense (QR, through gonum mat). A rank-deficient system is an error.
func lstsq(rows [][]float64, y []float64) ([]float64, error) {
	n, m := len(rows), len(rows[0])
	a := mat.NewDense(n, m, nil)
	for i, r := range rows {
		a.SetRow(i, r)
	}
	var qr mat.QR
	qr.Factorize(a)
	if c := qr.Cond(); math.IsInf(c, 0) || c > 1e13 {
		return nil, errors.New("the points do not determine the parameters (raw values too close together)")
	}
	var x mat.VecDense
	if err := qr.SolveVecTo(&x, false, mat.NewVecDense(n, y)); err != nil {
		return nil, err
	}
	return x.RawVector().Data, nil
}

// fitLinear fits p = offset + span·raw, minimising relative residuals
// ((fit − ref)/ref) so that a point at 1 Pa counts as much as one at 1 kPa.
func fitLinear(points []Point) (*Calibration, error) {
	rows := make([][]float64, len(points))
	y := make([]float64, len(points))
	for i, p := range points {
		rows[i] = []float64{1 / p.Reference, p.Raw / p.Reference}
		y[i] = 1
	}
	x, err := lstsq(rows, y)
	if err != nil {
		return nil, err
	}
	return &Calibration{
		Model:      ModelLinear,
		Parameters: map[string]float64{"offset_pa": x[0], "pa_per_raw": x[1]},
		Points:     points,
		Fit:        FitReport{Parameters: 2, Method: "weighted linear least squares on relative pressure residuals"},
		curve:      linearCurve{x[0], x[1]},
	}, nil
}

// polyCurve is log10 p = Σ coef[k]·z^k with z = (raw − mid)/half.
type polyCurve struct {
	coef      []float64
	mid, half float64
}

func (c polyCurve) pressure(raw float64) (float64, bool) {
	z := (raw - c.mid) / c.half
	s := 0.0
	for k := len(c.coef) - 1; k >= 0; k-- {
		s = s*z + c.coef[k]
	}
	return math.Pow(10, s), true
}

// slope returns d(log10 p)/d raw.
func (c polyCurve) slope(raw float64) float64 {
	z := (raw - c.mid) / c.half
	s := 0.0
	for k := len(c.coef) - 1; k >= 1; k-- {
		s = s*z + float64(k)*c.coef[k]
	}
	return s / c.half
}

// fitPoly fits log10 p as a polynomial of degree in the scaled raw signal by
// ordinary least squares (a residual in log10 p is a relative residual in p
// divided by ln 10, so the wide dynamic range is weighted evenly). Degree 1
// is the log-linear model, stored as raw_at_1pa and raw_per_decade.
func fitPoly(points []Point, degree int, model string) (*Calibration, error) {
	lo, hi := rawSpan(points)
	mid, half := (lo+hi)/2, (hi-lo)/2
	if model == ModelLogLinear {
		mid, half = 0, 1
	}
	rows := make([][]float64, len(points))
	y := make([]float64, len(points))
	for i, p := range points {
		z := (p.Raw - mid) / half
		row := make([]float64, degree+1)
		for k, zk := 0, 1.0; k <= degree; k, zk = k+1, zk*z {
			row[k] = zk
		}
		rows[i], y[i] = row, math.Log10(p.Reference)
	}
	coef, err := lstsq(rows, y)
	if err != nil {
		return nil, err
	}
	cv := polyCurve{coef, mid, half}
	c := &Calibration{Model: model, Points: points, curve: cv,
		Fit: FitReport{Parameters: degree + 1, Method: "linear least squares on log10 pressure"}}
	if model == ModelLogLinear {
		if coef[1] == 0 {
			return nil, errors.New("fitted slope is zero")
		}
		c.Parameters = map[string]float64{"raw_per_decade": 1 / coef[1], "raw_at_1pa": -coef[0] / coef[1]}
		return c, nil
	}
	if at, ok := turnover(cv, lo, hi); ok {
		return nil, fmt.Errorf("the degree-%d polynomial turns back near raw %.4g, inside the points' range: use a lower --degree or the pchip model", degree, at)
	}
	c.Parameters = map[string]float64{"raw_mid": mid, "raw_half": half}
	for k, v := range coef {
		c.Parameters["c"+strconv.Itoa(k)] = v
	}
	return c, nil
}

// turnover looks for a change of slope sign of the curve on [lo, hi].
func turnover(c polyCurve, lo, hi float64) (float64, bool) {
	const steps = 400
	s0 := c.slope(lo) + c.slope(hi)
	for i := 0; i <= steps; i++ {
		x := lo + (hi-lo)*float64(i)/steps
		if c.slope(x)*s0 <= 0 {
			return x, true
		}
	}
	return 0, false
}

// polyFromParams rebuilds a poly curve from c0…cN, raw_mid and raw_half.
func polyFromParams(params map[string]float64) (curve, error) {
	mid, ok1 := params["raw_mid"]
	half, ok2 := params["raw_half"]
	if !ok1 || !ok2 || !(half != 0) {
		return nil, errors.New("parameters raw_mid and raw_half (non-zero) are required")
	}
	var coef []float64
	for k := 0; ; k++ {
		v, ok := params["c"+strconv.Itoa(k)]
		if !ok {
			break
		}
		coef = append(coef, v)
	}
	if len(coef) < 2 || len(coef)+2 != len(params) {
		return nil, errors.New("parameters must be c0, c1, … (at least two, no gaps) plus raw_mid and raw_half")
	}
	return polyCurve{coef, mid, half}, nil
}

// rawSpan returns the smallest and largest raw of the points.
func rawSpan(points []Point) (lo, hi float64) {
	lo, hi = math.Inf(1), math.Inf(-1)
	for _, p := range points {
		lo, hi = min(lo, p.Raw), max(hi, p.Raw)
	}
	return lo, hi
}
