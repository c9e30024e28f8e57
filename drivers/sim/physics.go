package sim

import "math"

// Modelling constants. Where a value is a modelling choice rather than a
// published figure, the comment says so.
const (
	// outgassingDoublingK: outgassing doubles for every 15 K the wall is
	// above ambient. From memory (rule of thumb for water-dominated loads of
	// unbaked metal walls); a single Arrhenius law with the 22–25 kcal/mol
	// desorption energy of water on 304 stainless would be steeper (5–10 K
	// per doubling), the softer figure stands for a spread of binding energies.
	outgassingDoublingK = 15.0

	// outgassingMinAge clamps the pumping time in q = Q1h·(3600 s/t)^n so the
	// load stays finite at the start of a pump-down. Modelling choice: the
	// load is irrelevant then, the chamber is still near atmosphere.
	outgassingMinAge = 60.0 // s

	// stepTolerance bounds the relative change of the outgassing load within
	// one sub-step; the step is exact for the pressure given that load.
	stepTolerance = 0.005

	// defaultWallTau is the heater/wall lag when Config.WallTau is 0.
	defaultWallTau = 20 * 60.0 // s
)

// thermalFactor is how much faster the walls outgas at wallC than at ambientC.
func thermalFactor(wallC, ambientC float64) float64 {
	return math.Exp2((wallC - ambientC) / outgassingDoublingK)
}

// wallAfter solves dT/dt = (target − T)/tau exactly over h seconds.
func wallAfter(t, target, tau, h float64) float64 {
	return target + (t-target)*math.Exp(-h/tau)
}

// outgassingRate is q = q1h·f·(3600 s/age)^n, age clamped at outgassingMinAge.
func outgassingRate(q1h, n, f, age float64) float64 {
	if q1h == 0 {
		return 0
	}
	return q1h * f * math.Pow(3600/math.Max(age, outgassingMinAge), n)
}

// pumping holds the pump stages and the pressures where the pumping term
// P(p) = Σ S_i·max(0, p − u_i) changes form: each stage's ultimate and the
// crossover. Between two such boundaries P is linear in p, so with a constant
// gas load dp/dt = (Q − P(p))/V is solved exactly by an exponential.
type pumping struct {
	rough, high Pump
	crossover   float64
	edges       [5]float64 // sorted: 0, boundaries…, +Inf
	nEdges      int
}

func newPumping(rough, high Pump, crossover float64) pumping {
	pm := pumping{rough: rough, high: high, crossover: crossover}
	pm.edges[0] = 0
	pm.nEdges = 1
	add := func(b float64) {
		if b > 0 && !math.IsInf(b, 1) {
			pm.edges[pm.nEdges] = b
			pm.nEdges++
		}
	}
	if rough.Speed > 0 {
		add(rough.Ultimate)
	}
	if high.Speed > 0 {
		add(high.Ultimate)
		add(crossover)
	}
	pm.edges[pm.nEdges] = math.Inf(1)
	pm.nEdges++
	e := pm.edges[:pm.nEdges]
	for i := 1; i < len(e); i++ { // insertion sort of at most five values
		for j := i; j > 0 && e[j] < e[j-1]; j-- {
			e[j], e[j-1] = e[j-1], e[j]
		}
	}
	n := 1
	for _, b := range e[1:] { // drop repeated boundaries
		if b != pm.edges[n-1] {
			pm.edges[n] = b
			n++
		}
	}
	pm.nEdges = n
	return pm
}

// coeffs returns S and U of the linear form P(p) = S·p − U valid around m.
func (pm *pumping) coeffs(m float64) (s, u float64) {
	if pm.rough.Speed > 0 && m > pm.rough.Ultimate {
		s += pm.rough.Speed
		u += pm.rough.Speed * pm.rough.Ultimate
	}
	if pm.high.Speed > 0 && m < pm.crossover && m > pm.high.Ultimate {
		s += pm.high.Speed
		u += pm.high.Speed * pm.high.Ultimate
	}
	return s, u
}

// speed is the effective pumping speed P(p)/p at pressure p, in m³/s.
func (pm *pumping) speed(p float64) float64 {
	if p <= 0 {
		return 0
	}
	s, u := pm.coeffs(p)
	return math.Max(0, s-u/p)
}

func interior(lo, hi float64) float64 {
	if math.IsInf(hi, 1) {
		return 2*lo + 1
	}
	return (lo + hi) / 2
}

// interval finds the linear piece the trajectory from p occupies: the one
// containing p, or, when p sits on a boundary, the one on the side it moves
// toward under that piece's load (load gives the effective constant load for
// a piece of total speed S). ok is false when p is at rest.
func (pm *pumping) interval(p float64, load func(s float64) float64) (lo, hi float64, ok bool) {
	e := pm.edges[:pm.nEdges]
	net := func(lo, hi float64) float64 {
		s, u := pm.coeffs(interior(lo, hi))
		return load(s) + u - s*p
	}
	for i := 0; i+1 < len(e); i++ {
		if p > e[i] && p < e[i+1] {
			return e[i], e[i+1], true
		}
		if p != e[i] {
			continue
		}
		if net(e[i], e[i+1]) > 0 {
			return e[i], e[i+1], true
		}
		if i > 0 && net(e[i-1], e[i]) < 0 {
			return e[i-1], e[i], true
		}
		return 0, 0, false
	}
	return 0, 0, false
}

// lagWeight is where in a step of x = S·h/V time constants a linearly
// varying load must be sampled for the constant-load exponential to give the
// exact end pressure: w = 1/(1 − e^−x) − 1/x, from 1/2 (slow: the midpoint)
// to 1 (stiff: the pressure tracks the load to the step's end).
func lagWeight(x float64) float64 {
	if x < 1e-3 {
		return 0.5 + x/12
	}
	return 1/(-math.Expm1(-x)) - 1/x
}

// step advances p by h seconds under the load q0 + dq·τ (Pa·m³/s, τ from 0
// to h) in volume vol (m³). On each linear piece of the pumping term the
// solution is the exponential p(t) = p* + (p − p*)·exp(−S·t/V), exact for a
// constant load and, with the load sampled at lagWeight, for a linear one;
// where the trajectory reaches a boundary the remaining time continues on
// the next piece. The result lies between p and the equilibrium, so it is
// never negative.
func (pm *pumping) step(p, q0, dq, vol, h float64) float64 {
	tau := 0.0 // time into the step
	load := func(s float64) float64 {
		rest := h - tau
		if s == 0 {
			return q0 + dq*(tau+rest/2)
		}
		return q0 + dq*(tau+rest*lagWeight(s/vol*rest))
	}
	for range 2 * len(pm.edges) { // motion is monotone: one crossing per boundary at most
		rest := h - tau
		lo, hi, ok := pm.interval(p, load)
		if !ok {
			return p
		}
		s, u := pm.coeffs(interior(lo, hi))
		if s == 0 { // sealed or unpumped: a rise at q/V
			rate := load(0) / vol
			if !math.IsInf(hi, 1) && p+rate*rest >= hi {
				tau += (hi - p) / rate
				p = hi
				continue
			}
			return p + rate*rest
		}
		k := s / vol
		eq := (load(s) + u) / s
		edge := math.NaN()
		switch {
		case eq > hi:
			edge = hi
		case eq < lo:
			edge = lo
		}
		if !math.IsNaN(edge) {
			if tb := math.Log((p-eq)/(edge-eq)) / k; tb < rest {
				tau += tb
				p = edge
				continue
			}
		}
		return eq + (p-eq)*math.Exp(-k*rest)
	}
	return p
}
