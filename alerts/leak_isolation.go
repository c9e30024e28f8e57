package alerts

import (
	"math"
)

// A rise watch that cannot be told when the chamber is isolated (while:
// always) sees windows that mix a pumped stretch (pressure flat or falling)
// with an isolated one (pressure rising). Fitting one rise to both halves
// the slope. IsolationOnset finds where the record turns from pumped to
// isolated: the knee of a two-segment ("hinge") fit
//
//	p(t) = c + s1·(t − tk)  for t < tk,   c + s2·(t − tk)  for t ≥ tk,
//
// chosen over the knee times tk by least squares, and accepted over one
// straight line when BIC prefers it very strongly and the knee is sharp.

// Knee thresholds.
const (
	// kneeBIC: BIC(line) − BIC(hinge) above 10 is "very strong" evidence
	// on the scale of Kass & Raftery, JASA 90 (1995) 773, §3.2 (from
	// memory); a knee from noise or a gentle bend stays below it.
	kneeBIC = 10.0
	// kneeRatio: before an isolation the pumps hold the pressure, so it
	// rose at most a quarter as fast as after (common practice: a sharp
	// knee, not a bake slowly warming the walls).
	kneeRatio = 0.25
	// kneeSide: the fewest points on each side of a knee.
	kneeSide = 5
)

// An Onset is where a record turns from pumped to isolated.
type Onset struct {
	At     float64 // input-clock time of the knee, s
	Before float64 // dp/dt before it, Pa/s
	After  float64 // dp/dt after it, Pa/s
}

// IsolationOnset returns the last pumped-to-isolated knee in the record (t
// in seconds, any order; p in Pa), and false when there is none: the record
// is one rise throughout, or it never rises.
func IsolationOnset(t, p []float64) (Onset, bool) {
	ts, ps, _ := sortMerge(t, p)
	var found Onset
	ok := false
	for range 3 { // a knee within the isolated part would be a second closure
		o, yes := hingeKnee(ts, ps)
		if !yes {
			break
		}
		found, ok = o, true
		i := 0
		for i < len(ts) && ts[i] < o.At {
			i++
		}
		ts, ps = ts[i:], ps[i:]
	}
	return found, ok
}

// hingeKnee fits the hinge at every knee between kneeSide points from each
// end and returns the best one if it passes the thresholds.
func hingeKnee(t, p []float64) (Onset, bool) {
	n := len(t)
	if n < 2*kneeSide+1 {
		return Onset{}, false
	}
	t0, pm := t[0], 0.0
	for _, v := range p {
		pm += v / float64(n)
	}
	x, y := make([]float64, n), make([]float64, n) // from the first time and the mean pressure, for conditioning
	for i := range t {
		x[i], y[i] = t[i]-t0, p[i]-pm
	}
	p = y
	// Suffix sums from each index to the end.
	s1, s2, sp, stp := make([]float64, n+1), make([]float64, n+1), make([]float64, n+1), make([]float64, n+1)
	for i := n - 1; i >= 0; i-- {
		s1[i], s2[i] = s1[i+1]+x[i], s2[i+1]+x[i]*x[i]
		sp[i], stp[i] = sp[i+1]+p[i], stp[i+1]+x[i]*p[i]
	}
	spp := 0.0
	for _, v := range p {
		spp += v * v
	}
	lineSSE, lineC, ok := lsq2(float64(n), s1[0], s2[0], sp[0], stp[0], spp)
	if !ok {
		return Onset{}, false
	}
	best, bestK, bestC := math.Inf(1), -1, [3]float64{}
	for k := kneeSide; k <= n-kneeSide; k++ {
		sse, c, ok := hingeAt(x, k, s1, s2, sp, stp, spp)
		if ok && sse < best {
			best, bestK, bestC = sse, k, c
		}
	}
	if bestK < 0 {
		return Onset{}, false
	}
	// The sums give the SSE with some cancellation; recompute the two
	// that decide directly.
	lineSSE, best = 0, 0
	for i := range x {
		r := p[i] - lineC[0] - lineC[1]*x[i]
		lineSSE += r * r
		h := bestC[0] + bestC[1]*x[i] + bestC[2]*max(x[i]-x[bestK], 0)
		best += (p[i] - h) * (p[i] - h)
	}
	if best <= 0 {
		best = math.SmallestNonzeroFloat64
	}
	dBIC := float64(n)*math.Log(lineSSE/best) - 2*math.Log(float64(n))
	before, after := bestC[1], bestC[1]+bestC[2]
	if dBIC <= kneeBIC || after <= 0 || before > kneeRatio*after {
		return Onset{}, false
	}
	return Onset{At: t[bestK], Before: before, After: after}, true
}

// hingeAt fits p ≈ c0 + c1·x + c2·(x − x_k)₊ by least squares from the
// suffix sums and returns the residual sum of squares.
func hingeAt(x []float64, k int, s1, s2, sp, stp []float64, spp float64) (float64, [3]float64, bool) {
	n, xk := float64(len(x)), x[k]
	m := float64(len(x) - k)
	h1 := s1[k] - xk*m                 // Σ h
	h2 := s2[k] - 2*xk*s1[k] + xk*xk*m // Σ h²
	hx := s2[k] - xk*s1[k]             // Σ h·x
	hp := stp[k] - xk*sp[k]            // Σ h·p
	a := [3][3]float64{{n, s1[0], h1}, {s1[0], s2[0], hx}, {h1, hx, h2}}
	b := [3]float64{sp[0], stp[0], hp}
	c, ok := solve3(a, b)
	if !ok {
		return 0, c, false
	}
	// SSE = Σp² − cᵀb at the least-squares solution.
	return max(spp-(c[0]*b[0]+c[1]*b[1]+c[2]*b[2]), 0), c, true
}

// lsq2 fits p ≈ c0 + c1·x from its sums and returns the residual sum of squares.
func lsq2(n, sx, sxx, sp, sxp, spp float64) (float64, [2]float64, bool) {
	det := n*sxx - sx*sx
	if !(det > 0) {
		return 0, [2]float64{}, false
	}
	c1 := (n*sxp - sx*sp) / det
	c0 := (sp - c1*sx) / n
	return max(spp-(c0*sp+c1*sxp), 0), [2]float64{c0, c1}, true
}

// solve3 solves a 3×3 symmetric system by Gaussian elimination with
// partial pivoting.
func solve3(a [3][3]float64, b [3]float64) ([3]float64, bool) {
	for col := range 3 {
		piv := col
		for r := col + 1; r < 3; r++ {
			if math.Abs(a[r][col]) > math.Abs(a[piv][col]) {
				piv = r
			}
		}
		if a[piv][col] == 0 || !isFinite(a[piv][col]) {
			return [3]float64{}, false
		}
		a[col], a[piv] = a[piv], a[col]
		b[col], b[piv] = b[piv], b[col]
		for r := col + 1; r < 3; r++ {
			f := a[r][col] / a[col][col]
			for c := col; c < 3; c++ {
				a[r][c] -= f * a[col][c]
			}
			b[r] -= f * b[col]
		}
	}
	var x [3]float64
	for r := 2; r >= 0; r-- {
		v := b[r]
		for c := r + 1; c < 3; c++ {
			v -= a[r][c] * x[c]
		}
		x[r] = v / a[r][r]
	}
	return x, isFinite(x[0]) && isFinite(x[1]) && isFinite(x[2])
}
