package calib

import (
	"cmp"
	"errors"
	"fmt"
	"math"
	"slices"

	"gonum.org/v1/gonum/interp"
)

// PCHIP is a monotone piecewise-cubic Hermite interpolant (Fritsch and
// Carlson, SIAM J. Numer. Anal. 17(2), 1980, with the node derivatives of
// Fritsch and Butland 1984 as gonum's interp.FritschButland computes them).
// Between monotone data it stays monotone and passes through every node.
// Outside the nodes it continues along the end tangent.
type PCHIP struct {
	xs, ys []float64
	fb     interp.FritschButland
}

// NewPCHIP fits the interpolant to nodes with strictly increasing xs.
func NewPCHIP(xs, ys []float64) (*PCHIP, error) {
	if len(xs) < 2 || len(xs) != len(ys) {
		return nil, fmt.Errorf("pchip needs at least two nodes and as many ys as xs, got %d and %d", len(xs), len(ys))
	}
	for i := range xs {
		if math.IsNaN(xs[i]) || math.IsNaN(ys[i]) || math.IsInf(xs[i], 0) || math.IsInf(ys[i], 0) {
			return nil, fmt.Errorf("pchip node %d: x %g, y %g must be finite", i+1, xs[i], ys[i])
		}
		if i > 0 && !(xs[i] > xs[i-1]) {
			return nil, fmt.Errorf("pchip nodes %d and %d: x %g then %g must strictly increase", i, i+1, xs[i-1], xs[i])
		}
	}
	p := &PCHIP{xs: slices.Clone(xs), ys: slices.Clone(ys)}
	if err := p.fb.Fit(p.xs, p.ys); err != nil {
		return nil, err
	}
	return p, nil
}

// At returns the interpolated value at x.
func (p *PCHIP) At(x float64) float64 {
	n := len(p.xs)
	switch {
	case x < p.xs[0]:
		return p.ys[0] + (x-p.xs[0])*p.fb.PredictDerivative(p.xs[0])
	case x > p.xs[n-1]:
		return p.ys[n-1] + (x-p.xs[n-1])*p.fb.PredictDerivative(p.xs[n-1])
	}
	return p.fb.Predict(x)
}

// pchipCurve interpolates log10 p over raw.
type pchipCurve struct{ p *PCHIP }

func (c pchipCurve) pressure(raw float64) (float64, bool) { return math.Pow(10, c.p.At(raw)), true }

func newPCHIPCurve(knots []Knot) (curve, error) {
	xs := make([]float64, len(knots))
	ys := make([]float64, len(knots))
	for i, k := range knots {
		if !(k.Pressure > 0) {
			return nil, fmt.Errorf("knot %d: pressure %g Pa must be above zero", i+1, k.Pressure)
		}
		xs[i], ys[i] = k.Raw, math.Log10(k.Pressure)
	}
	p, err := NewPCHIP(xs, ys)
	if err != nil {
		return nil, err
	}
	return pchipCurve{p}, nil
}

// knotsOf merges points with equal raw (their pressures averaged in log,
// i.e. a geometric mean) and returns knots in increasing raw.
func knotsOf(points []Point) []Knot {
	idx := make([]int, len(points))
	for i := range idx {
		idx[i] = i
	}
	slices.SortStableFunc(idx, func(a, b int) int { return cmp.Compare(points[a].Raw, points[b].Raw) })
	var knots []Knot
	for i := 0; i < len(idx); {
		j, sum := i, 0.0
		for ; j < len(idx) && points[idx[j]].Raw == points[idx[i]].Raw; j++ {
			sum += math.Log10(points[idx[j]].Reference)
		}
		knots = append(knots, Knot{Raw: points[idx[i]].Raw, Pressure: math.Pow(10, sum/float64(j-i))})
		i = j
	}
	return knots
}

// fitPCHIP interpolates log10 p through the points. Its residuals are zero
// at the knots (apart from merged repeats), so the scatter used for the
// uncertainty comes from leaving each interior knot out in turn and asking
// the curve through the others to predict it.
func fitPCHIP(points []Point) (*Calibration, error) {
	knots := knotsOf(points)
	if len(knots) < 2 {
		return nil, errors.New("pchip needs at least two distinct raw values")
	}
	cv, err := newPCHIPCurve(knots)
	if err != nil {
		return nil, err
	}
	c := &Calibration{Model: ModelPCHIP, Knots: knots, Points: points, curve: cv, Parameters: map[string]float64{},
		Fit: FitReport{Parameters: len(knots), Method: "monotone piecewise-cubic interpolation of log10 pressure (Fritsch–Carlson/Butland)"}}
	loo, err := leaveOneOut(knots)
	if err != nil {
		return nil, err
	}
	c.Fit.LeaveOneOut = loo
	if len(knots) >= 3 {
		s := 0.0
		for _, r := range loo {
			s += r * r
		}
		c.Fit.Scatter = math.Sqrt(s / float64(len(knots)-2))
	} else {
		c.Fit.Notes = append(c.Fit.Notes, "two knots only: the curve is a straight line in log pressure and its scatter cannot be estimated")
	}
	return c, nil
}

// leaveOneOut predicts every interior knot from the others (relative error); ends get 0.
func leaveOneOut(knots []Knot) ([]float64, error) {
	out := make([]float64, len(knots))
	for i := 1; i+1 < len(knots); i++ {
		rest := slices.Delete(slices.Clone(knots), i, i+1)
		cv, err := newPCHIPCurve(rest)
		if err != nil {
			return nil, err
		}
		p, _ := cv.pressure(knots[i].Raw)
		out[i] = p/knots[i].Pressure - 1
	}
	return out, nil
}
