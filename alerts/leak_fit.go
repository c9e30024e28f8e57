package alerts

import (
	"errors"
	"math"

	"gonum.org/v1/gonum/mat"
	"gonum.org/v1/gonum/optimize"
)

// huberC is the Huber loss's tuning constant in noise units: 1.345 gives 95 %
// efficiency when the noise is normal (Holland & Welsch, Commun. Stat. A6
// (1977) 813; common practice).
const huberC = 1.345

// Bounds of τ relative to the span T of the record. Below three sample
// intervals the exponential is a step at t = 0 that the offset absorbs;
// beyond 3·T it bends so little over the record that it is a straight line
// the slope absorbs (common practice: both ends make the fit unidentifiable).
const (
	tauMinSamples = 3.0
	tauMaxSpans   = 3.0
	tauGrid       = 24
)

// design holds a record in normalised units, u = t/T in [0, 1] and
// y = (p − pRef)/pScale, with each point's noise scale and scratch space.
// A point's scale is √(sc² + sq_i): the noise beyond quantisation, sc, the
// same for all, and the reading's own quantisation variance sq_i = q_i²/12.
type design struct {
	u, y, one, g []float64
	sq, s        []float64 // quantisation variances; per-point scales
	sc, tiny     float64   // noise beyond quantisation; a floor against 0
	w, r         []float64 // IRLS weights (Huber weight / s_i²); residuals
}

func newDesign(u, y, sq []float64, tiny float64) *design {
	n := len(u)
	d := &design{u: u, y: y, sq: sq, tiny: tiny, one: make([]float64, n), g: make([]float64, n),
		s: make([]float64, n), w: make([]float64, n), r: make([]float64, n)}
	for i := range d.one {
		d.one[i] = 1
	}
	return d
}

// setNoise sets the noise beyond quantisation and the per-point scales.
func (d *design) setNoise(sc float64) {
	d.sc = sc
	for i, q := range d.sq {
		d.s[i] = math.Sqrt(sc*sc + q + d.tiny*d.tiny)
	}
}

// huber fits y ≈ Σ coef_j·cols_j with the Huber loss on the standardised
// residuals r_i/s_i by iteratively reweighted least squares, starting from
// weighted least squares. It returns the loss Σρ(r_i/s_i), leaving the
// residuals in d.r.
func (d *design) huber(cols [][]float64, coef []float64) (float64, bool) {
	for i, s := range d.s {
		d.w[i] = 1 / (s * s)
	}
	prev := make([]float64, len(coef))
	loss := math.Inf(1)
	for iter := 0; iter < 60; iter++ {
		if !weightedLS(cols, d.y, d.w, coef) {
			return 0, false
		}
		loss = d.reweight(cols, coef)
		if iter > 0 && converged(coef, prev) {
			break
		}
		copy(prev, coef)
	}
	return loss, true
}

func converged(c, prev []float64) bool {
	for i := range c {
		if math.Abs(c[i]-prev[i]) > 1e-9*(1+math.Abs(c[i])) {
			return false
		}
	}
	return true
}

// reweight computes residuals, the Huber loss and the next IRLS weights.
func (d *design) reweight(cols [][]float64, coef []float64) float64 {
	loss := 0.0
	for i := range d.y {
		f := 0.0
		for j, c := range cols {
			f += coef[j] * c[i]
		}
		r := d.y[i] - f
		d.r[i] = r
		s := d.s[i]
		a := math.Abs(r) / s
		if a <= huberC {
			d.w[i] = 1 / (s * s)
			loss += 0.5 * a * a
		} else {
			d.w[i] = huberC / a / (s * s)
			loss += huberC*a - 0.5*huberC*huberC
		}
	}
	return loss
}

// solveNoise sets the noise beyond quantisation so that the standardised
// residuals r have unit robust scale: 1.4826 × median |r_i|/s_i = 1.
func (d *design) solveNoise(r []float64) {
	scale := func(sc float64) float64 {
		v := make([]float64, len(r))
		for i := range r {
			v[i] = math.Abs(r[i]) / math.Sqrt(sc*sc+d.sq[i]+d.tiny*d.tiny)
		}
		return 1.4826 * median(v)
	}
	lo, hi := 0.0, 0.0
	for _, v := range r {
		hi = max(hi, math.Abs(v))
	}
	if scale(lo) <= 1 || hi == 0 {
		d.setNoise(0)
		return
	}
	for range 60 {
		mid := (lo + hi) / 2
		if scale(mid) > 1 {
			lo = mid
		} else {
			hi = mid
		}
	}
	d.setNoise(hi)
}

// weightedLS solves the weighted normal equations for coef by Cholesky.
func weightedLS(cols [][]float64, y, w, coef []float64) bool {
	k := len(cols)
	a := mat.NewSymDense(k, nil)
	rhs := mat.NewVecDense(k, nil)
	for j := range k {
		for l := j; l < k; l++ {
			s := 0.0
			for i, wi := range w {
				s += wi * cols[j][i] * cols[l][i]
			}
			a.SetSym(j, l, s)
		}
		s := 0.0
		for i, wi := range w {
			s += wi * cols[j][i] * y[i]
		}
		rhs.SetVec(j, s)
	}
	var ch mat.Cholesky
	if !ch.Factorize(a) {
		return false
	}
	x := mat.NewVecDense(k, coef)
	return ch.SolveVecTo(x, rhs) == nil
}

// normFit is a fit in normalised units: coef = (p0, A, B) with A the rise of
// the linear term over the record, B the curved term's amplitude, θ = τ/T.
type normFit struct {
	model Model
	coef  [3]float64
	theta float64
	loss  float64
	resid []float64
}

func (d *design) fitLine() (normFit, error) {
	f := normFit{model: ModelLine}
	loss, ok := d.huber([][]float64{d.one, d.u}, f.coef[:2])
	if !ok {
		return f, errors.New("the straight-line fit is singular (all points at one time?)")
	}
	f.loss, f.resid = loss, slicesClone(d.r)
	return f, nil
}

// profile fits the curved model with θ held fixed.
func (d *design) profile(theta float64) ([3]float64, float64, bool) {
	for i, u := range d.u {
		d.g[i] = -math.Expm1(-u / theta)
	}
	var c [3]float64
	loss, ok := d.huber([][]float64{d.one, d.u, d.g}, c[:])
	return c, loss, ok
}

// fitCurved fits the curved model with θ in [thMin, thMax]: the linear
// parameters are profiled out (for a fixed θ the Huber problem is convex), a
// log-spaced grid gives the start and gonum's Nelder–Mead refines log θ.
// Where the best amplitude would be negative the profile takes the line's
// loss: a wall that takes up gas is not what the term describes.
func (d *design) fitCurved(thMin, thMax, lineLoss float64) (normFit, error) {
	lo, hi := math.Log(thMin), math.Log(thMax)
	obj := func(x float64) float64 {
		xc := min(max(x, lo), hi)
		c, loss, ok := d.profile(math.Exp(xc))
		if !ok {
			return math.MaxFloat64
		}
		if c[2] < 0 {
			loss = lineLoss
		}
		return loss + (x-xc)*(x-xc)*(1+math.Abs(loss))*100
	}
	step := (hi - lo) / (tauGrid - 1)
	bestX, bestF := lo, math.Inf(1)
	for k := range tauGrid {
		x := lo + float64(k)*step
		if f := obj(x); f < bestF {
			bestX, bestF = x, f
		}
	}
	res, err := optimize.Minimize(optimize.Problem{Func: func(x []float64) float64 { return obj(x[0]) }},
		[]float64{bestX}, &optimize.Settings{MajorIterations: 80,
			Converger: &optimize.FunctionConverge{Absolute: 1e-12, Relative: 1e-10, Iterations: 8}},
		&optimize.NelderMead{SimplexSize: step / 2})
	if err == nil && res.F < bestF {
		bestX = res.X[0]
	}
	theta := math.Exp(min(max(bestX, lo), hi))
	c, loss, ok := d.profile(theta)
	if !ok {
		return normFit{}, errors.New("the curved fit is singular")
	}
	if c[2] <= 0 {
		return normFit{}, errors.New("the curved fit finds no outgassing term (amplitude ≤ 0)")
	}
	return normFit{model: ModelCurved, coef: c, theta: theta, loss: loss, resid: slicesClone(d.r)}, nil
}

// jacobian returns the columns ∂f/∂(p0, A[, B, θ]) at the fit.
func (d *design) jacobian(f normFit) [][]float64 {
	if f.model == ModelLine {
		return [][]float64{d.one, d.u}
	}
	g := make([]float64, len(d.u))
	dth := make([]float64, len(d.u))
	b, th := f.coef[2], f.theta
	for i, u := range d.u {
		e := math.Exp(-u / th)
		g[i] = -math.Expm1(-u / th)
		dth[i] = -b * e * u / (th * th)
	}
	return [][]float64{d.one, d.u, g, dth}
}

// covariance returns the parameters' covariance in normalised units: the
// M-estimator's asymptotic form K·(JᵀS⁻²J)⁻¹ with K = mean(ψ²)/mean(ψ')²
// (Huber, Robust Statistics (1981) §7.6, from memory), times n/(n − k) for
// the degrees of freedom and n/nEff for autocorrelated noise.
func (d *design) covariance(f normFit, nEff float64) (*mat.SymDense, error) {
	jac := d.jacobian(f)
	k, n := len(jac), len(d.u)
	if n <= k {
		return nil, errors.New("no degrees of freedom left for an uncertainty")
	}
	var psi2, inside float64
	for i, r := range f.resid {
		u := r / d.s[i]
		if math.Abs(u) <= huberC {
			inside++
			psi2 += u * u
		} else {
			psi2 += huberC * huberC
		}
	}
	if inside == 0 {
		return nil, errors.New("every point is an outlier to the fit")
	}
	kf := (psi2 / float64(n)) / math.Pow(inside/float64(n), 2)
	jtj := mat.NewSymDense(k, nil)
	for j := range k {
		for l := j; l < k; l++ {
			v := 0.0
			for i, s := range d.s {
				v += jac[j][i] * jac[l][i] / (s * s)
			}
			jtj.SetSym(j, l, v)
		}
	}
	var ch mat.Cholesky
	if !ch.Factorize(jtj) {
		return nil, errors.New("the fit's parameters are not separately determined (singular Jacobian)")
	}
	cov := mat.NewSymDense(k, nil)
	if err := ch.InverseTo(cov); err != nil {
		return nil, err
	}
	cov.ScaleSym(kf*float64(n)/float64(n-k)*float64(n)/nEff, cov)
	return cov, nil
}

func slicesClone(v []float64) []float64 { return append([]float64(nil), v...) }

// lag1 returns the lag-1 autocorrelation of the standardised residuals
// r_i/s_i winsorised at the Huber constant, clamped to [0, 0.95].
func lag1(r, s []float64) float64 {
	if len(r) < 3 {
		return 0
	}
	w := make([]float64, len(r))
	mean := 0.0
	for i, v := range r {
		w[i] = min(max(v/s[i], -huberC), huberC)
		mean += w[i]
	}
	mean /= float64(len(w))
	var num, den float64
	for i := range w {
		w[i] -= mean
		den += w[i] * w[i]
	}
	for i := 1; i < len(w); i++ {
		num += w[i] * w[i-1]
	}
	if den == 0 {
		return 0
	}
	return min(max(num/den, 0), 0.95)
}
