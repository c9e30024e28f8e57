package calib

import (
	"errors"
	"math"

	"gonum.org/v1/gonum/optimize"
)

// The heat-loss fit minimises relative pressure residuals, because the
// calibration exists to read pressure and its report and uncertainty are
// relative in pressure. A pressure residual needs the model inverted, which
// has no value outside (S0, S0 + A·Pt) and would make the objective jump
// while the parameters move; so each signal residual is divided by the
// local sensitivity p·dS/dp instead — the same relative pressure error to
// first order, defined for every parameter value:
//
//	r_i = (S0 + A·g_i − s_i)/(p_i·A/(1 + p_i/Pt)²),   g_i = p_i/(1 + p_i/Pt)
//	    = (v + g_i − u·s_i)·w_i,  u = 1/A, v = S0/A, w_i = (1 + p_i/Pt)²/p_i.
//
// For a fixed Pt the residuals are linear in (u, v): a linear least-squares
// solve (gonum mat) gives the best S0 and A exactly. Only ln Pt is searched:
// a log grid from 1/1000 of the lowest to 1000× the highest reference finds
// the basin, and gonum optimize (Nelder–Mead) polishes it. Searching ln Pt
// keeps the one nonlinear parameter well scaled across decades, and the
// separable solve needs no starting values for S0 and A.

// heatLossAt returns the objective and the linear parameters for Pt = e^t.
func heatLossAt(points []Point, t float64) (f float64, h HeatLoss) {
	pt := math.Exp(t)
	rows := make([][]float64, len(points))
	y := make([]float64, len(points))
	for i, p := range points {
		q := 1 + p.Reference/pt
		w := q * q / p.Reference
		g := p.Reference / q
		rows[i] = []float64{w, -p.Raw * w}
		y[i] = -g * w
	}
	x, err := lstsq(rows, y)
	if err != nil || !(x[1] > 0) {
		return math.Inf(1), HeatLoss{}
	}
	h = HeatLoss{S0: x[0] / x[1], A: 1 / x[1], Pt: pt}
	for i := range points {
		r := rows[i][0]*x[0] + rows[i][1]*x[1] - y[i]
		f += r * r
	}
	return f, h
}

// fitHeatLoss fits raw = S0 + A·p/(1 + p/Pt) (see the comment above).
func fitHeatLoss(points []Point) (*Calibration, error) {
	pmin, pmax := math.Inf(1), 0.0
	for _, p := range points {
		pmin, pmax = min(pmin, p.Reference), max(pmax, p.Reference)
	}
	lo, hi := math.Log(pmin/1e3), math.Log(pmax*1e3)
	const steps = 120
	best, bestF := lo, math.Inf(1)
	for i := 0; i <= steps; i++ {
		t := lo + (hi-lo)*float64(i)/steps
		if f, _ := heatLossAt(points, t); f < bestF {
			best, bestF = t, f
		}
	}
	if math.IsInf(bestF, 1) {
		return nil, errNoHeatLoss
	}
	obj := func(x []float64) float64 {
		if x[0] < lo || x[0] > hi {
			return math.Inf(1)
		}
		f, _ := heatLossAt(points, x[0])
		return f
	}
	res, err := optimize.Minimize(optimize.Problem{Func: obj}, []float64{best}, nil, &optimize.NelderMead{})
	if err == nil && res.F <= bestF {
		best = res.X[0]
	}
	_, h := heatLossAt(points, best)
	c := &Calibration{Model: ModelHeatLoss, Points: points, curve: heatLossCurve{h},
		Parameters: map[string]float64{"s0": h.S0, "a_per_pa": h.A, "pt_pa": h.Pt},
		Fit: FitReport{Parameters: 3,
			Method: "separable least squares on first-order relative pressure residuals; ln p_t searched (grid, then gonum Nelder–Mead)"}}
	step := (hi - lo) / steps
	switch {
	case best > hi-2*step:
		c.Fit.Notes = append(c.Fit.Notes, "p_t is not determined: every point lies in the linear (molecular) part of the curve; do not use this calibration above the highest point")
	case best < lo+2*step:
		c.Fit.Notes = append(c.Fit.Notes, "p_t is not determined: every point lies in the saturated part of the curve; add points at lower pressure")
	}
	return c, nil
}

var errNoHeatLoss = errors.New("no heat-loss curve with a positive slope fits these points (does raw rise with pressure?)")
