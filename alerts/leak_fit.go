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
	r            []float64 // residuals
	in           []bool    // within the Huber constant
}

func newDesign(u, y, sq []float64, tiny float64) *design {
	n := len(u)
	d := &design{u: u, y: y, sq: sq, tiny: tiny, one: make([]float64, n), g: make([]float64, n),
		s: make([]float64, n), r: make([]float64, n), in: make([]bool, n)}
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
// residuals r_i/s_i. Given which points lie beyond the Huber constant, the
// minimum solves a weighted least-squares problem exactly (the modified
// Newton step of Huber, Robust Statistics (1981) §7.8); the steps repeat
// until that partition stops changing, halving a step that would raise the
// loss. It returns the loss Σρ(r_i/s_i), leaving residuals in d.r.
func (d *design) huber(cols [][]float64, coef []float64) (float64, bool) {
	for i := range d.in {
		d.in[i] = true
	}
	if !d.newtonStep(cols, coef, false) {
		return 0, false
	}
	loss := d.evaluate(cols, coef)
	prev, trial := make([]float64, len(coef)), make([]float64, len(coef))
	for range 50 {
		copy(prev, coef)
		changed := d.partition()
		if !changed {
			break
		}
		if !d.newtonStep(cols, trial, false) && !d.newtonStep(cols, trial, true) {
			return 0, false
		}
		next := d.evaluate(cols, trial)
		for h := 0; h < 30 && next > loss*(1+1e-14); h++ {
			for j := range trial {
				trial[j] = (prev[j] + trial[j]) / 2
			}
			next = d.evaluate(cols, trial)
		}
		if next > loss*(1+1e-14) {
			break // no descent left: at the minimum to rounding
		}
		copy(coef, trial)
		loss = next
	}
	d.evaluate(cols, coef)
	return loss, true
}

// partition marks the points within the Huber constant from the current
// residuals and reports whether any mark changed.
func (d *design) partition() bool {
	changed := false
	for i, r := range d.r {
		in := math.Abs(r) <= huberC*d.s[i]
		if in != d.in[i] {
			d.in[i], changed = in, true
		}
	}
	return changed
}

// evaluate computes the residuals and the Huber loss at coef.
func (d *design) evaluate(cols [][]float64, coef []float64) float64 {
	loss := 0.0
	for i := range d.y {
		f := 0.0
		for j, c := range cols {
			f += coef[j] * c[i]
		}
		r := d.y[i] - f
		d.r[i] = r
		a := math.Abs(r) / d.s[i]
		if a <= huberC {
			loss += 0.5 * a * a
		} else {
			loss += huberC*a - 0.5*huberC*huberC
		}
	}
	return loss
}

// newtonStep solves for the minimum with the current partition: points
// within the constant enter by least squares (weight 1/s_i²), points beyond
// it pull with the constant force c·sign(r_i)/s_i. When too few points are
// within for that to be solvable, irls weights the others by the Huber
// weight c·s_i/|r_i| instead (an IRLS step). One pass over the data builds
// the normal equations; solveSPD solves them.
func (d *design) newtonStep(cols [][]float64, coef []float64, irls bool) bool {
	k := len(cols)
	var a [4][4]float64
	var b [4]float64
	var x [4]float64
	for i := range d.y {
		for j := range k {
			x[j] = cols[j][i]
		}
		s := d.s[i]
		if d.in[i] || irls {
			w := 1 / (s * s)
			if !d.in[i] {
				w *= huberC * s / math.Abs(d.r[i])
			}
			for j := range k {
				wx := w * x[j]
				for l := j; l < k; l++ {
					a[j][l] += wx * x[l]
				}
				b[j] += wx * d.y[i]
			}
			continue
		}
		f := math.Copysign(huberC/s, d.r[i])
		for j := range k {
			b[j] += f * x[j]
		}
	}
	return solveSPD(&a, &b, k, coef)
}

// conditionLimit is the largest 1-norm condition number solveSPD accepts:
// gonum's mat.ConditionTolerance, the limit its Cholesky solve (which this
// replaced in the Huber steps) applied.
const conditionLimit = 1e16

// solveSPD solves a·x = b for the k×k (k ≤ 4) symmetric matrix whose upper
// triangle a holds, by Cholesky factorisation a = L·Lᵀ, into x. It is false
// when a is not positive definite or is too ill-conditioned to trust
// (conditionLimit; the condition number is computed exactly from the
// inverse, which costs nothing at this size). Written out for these small
// systems because gonum's general Cholesky, with its condition estimate and
// allocations, was most of the cost of a rise analysis: the Huber steps
// solve thousands of 2×2 and 3×3 systems per record.
func solveSPD(a *[4][4]float64, b *[4]float64, k int, x []float64) bool {
	var l [4][4]float64
	for j := range k {
		sum := a[j][j]
		for m := range j {
			sum -= l[j][m] * l[j][m]
		}
		if !(sum > 0) || math.IsInf(sum, 0) {
			return false // not positive definite (or not finite)
		}
		l[j][j] = math.Sqrt(sum)
		for i := j + 1; i < k; i++ {
			v := a[j][i] // a is stored as its upper triangle: a[j][i], j < i
			for m := range j {
				v -= l[i][m] * l[j][m]
			}
			l[i][j] = v / l[j][j]
		}
	}
	solve := func(rhs *[4]float64, out *[4]float64) {
		var y [4]float64
		for i := range k { // L·y = rhs
			v := rhs[i]
			for m := range i {
				v -= l[i][m] * y[m]
			}
			y[i] = v / l[i][i]
		}
		for i := k - 1; i >= 0; i-- { // Lᵀ·out = y
			v := y[i]
			for m := i + 1; m < k; m++ {
				v -= l[m][i] * out[m]
			}
			out[i] = v / l[i][i]
		}
	}
	normA, normInv := 0.0, 0.0
	for j := range k {
		var e, col [4]float64
		e[j] = 1
		solve(&e, &col)
		sa, si := 0.0, 0.0
		for i := range k {
			sa += math.Abs(a[min(i, j)][max(i, j)])
			si += math.Abs(col[i])
		}
		normA, normInv = max(normA, sa), max(normInv, si)
	}
	if !(normA*normInv <= conditionLimit) {
		return false
	}
	var out [4]float64
	solve(b, &out)
	copy(x, out[:k])
	return true
}

// solveNoise sets the noise beyond quantisation so that the standardised
// residuals r of a fit with k parameters have the robust scale that unit
// noise leaves: 1.4826 × median |r_i|/s_i = √((n − k)/n).
func (d *design) solveNoise(r []float64, k int) {
	target := math.Sqrt(float64(max(len(r)-k, 1)) / float64(len(r)))
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
	hi /= target
	if scale(lo) <= target || hi == 0 {
		d.setNoise(0)
		return
	}
	for range 30 { // to 1e-9 of the bracket: far below what the noise estimate can resolve
		mid := (lo + hi) / 2
		if scale(mid) > target {
			lo = mid
		} else {
			hi = mid
		}
	}
	d.setNoise(hi)
}

// normFit is a fit in normalised units: coef = (p0, A, B) with A the rise of
// the linear term over the record, B the curved term's amplitude, θ = τ/T.
type normFit struct {
	model Model
	k     int // parameters
	coef  [3]float64
	theta float64
	loss  float64
	resid []float64
}

func (d *design) fitLine() (normFit, error) {
	f := normFit{model: ModelLine, k: 2}
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
	return normFit{model: ModelCurved, k: 4, coef: c, theta: theta, loss: loss, resid: slicesClone(d.r)}, nil
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
