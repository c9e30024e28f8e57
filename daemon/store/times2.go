package store

import (
	"math/bits"
	"slices"
)

// Version-2 time column. Times are kept as whole multiples of the chunk's
// time unit (the greatest common divisor of its time steps: the store's
// resolution, 1 ms by default, or coarser for a clean schedule, or 1 ns for
// a migrated version-1 chunk), so the unit costs nothing per point. Each
// time is predicted as an anchor plus the chunk's period P; the anchor
// follows the times slowly (an eighth of each residual), so a poller's
// jitter costs about its own spread, not the spread of a difference of two
// jitters, and a residual beyond P/2 (a missed poll, a restart) re-anchors
// at once. P and the anchor are kept in 1/256 units, P being the mean of
// the chunk's ordinary steps, so a period that is not a whole number of
// units does not bias the residuals. Residuals are
// zigzagged and written as a residual column (entropy.go). A chunk whose
// times all fall on their predictions writes one flag bit.
//
//	expGolomb0  unit − 1 (ns)
//	expGolomb0  P·256 (units)
//	1 bit       1: every residual is zero (no more bits)
//	residuals   n−1 of them (entropy.go)

// timeSample bounds the steps sorted to find the median step.
const timeSample = 31

// timeFrac is the number of fraction bits of P and the anchor.
const timeFrac = 8

// encodeTimes2 writes the time column for sorted ns (the first time and
// the span are in the header). zz is scratch space.
func encodeTimes2(w *bitWriter, ns []int64, zz []uint64, rc *residualCoder) []uint64 {
	n := len(ns)
	if n < 2 {
		return zz
	}
	// zz holds the steps in ns first, then in units, then the residuals.
	zz = zz[:0]
	var g uint64
	for i := 1; i < n; i++ {
		d := uint64(ns[i] - ns[i-1])
		zz = append(zz, d)
		if g != 1 && (g == 0 || mod(d, g) != 0) {
			g = gcd(g, d)
		}
	}
	if g == 0 {
		g = 1
	}
	if g > 1 {
		for i, d := range zz {
			zz[i] = div(d, g)
		}
	}
	period := periodOf(zz)
	w.expGolomb(g-1, 0)
	w.expGolomb(period, 0)

	var u, sum uint64
	var a anchor
	allZero := true
	for i, d := range zz {
		u += d
		e := int64(u - a.predict(period))
		a.follow(period, e, u)
		z := zigzag(e)
		zz[i] = z
		sum += min(z, 1<<40)
		allZero = allZero && z == 0
	}
	w.bit(allZero)
	if !allZero {
		encodeResiduals(w, zz, sum, rc)
	}
	return zz
}

// div and mod are d/g and d%g, in 32 bits when both fit (much faster on
// the small computers the daemon runs on).
func div(d, g uint64) uint64 {
	if d|g < 1<<32 {
		return uint64(uint32(d) / uint32(g))
	}
	return d / g
}

func mod(d, g uint64) uint64 {
	if d|g < 1<<32 {
		return uint64(uint32(d) % uint32(g))
	}
	return d % g
}

// periodOf returns the period of a chunk's steps (in units), times 256:
// the mean of the steps within half a median step of the median (so
// missed polls and restarts do not count), which for a steady schedule is
// very nearly the span over the number of steps.
func periodOf(steps []uint64) uint64 {
	var sample [timeSample]uint64
	n := len(steps)
	m := min(n, timeSample)
	for j := range m {
		sample[j] = steps[j*n/m]
	}
	slices.Sort(sample[:m])
	med := sample[(m-1)/2]
	if med == 0 || med >= 1<<(62-timeFrac) {
		return 0
	}
	var sum, count uint64
	for _, d := range steps {
		if d >= med-med/2 && d <= med+med/2 {
			sum, count = sum+d, count+1
		}
	}
	if sum >= 1<<(63-timeFrac) {
		return med << timeFrac
	}
	return (sum<<timeFrac + count/2) / count
}

// An anchor is where the time column expects the schedule to be, in
// 1/256 units.
type anchor struct{ at uint64 }

// predict returns the next time the anchor expects, in units.
func (a *anchor) predict(period uint64) uint64 {
	return (a.at + period + 1<<(timeFrac-1)) >> timeFrac
}

// follow moves the anchor after a time u whose residual was e.
func (a *anchor) follow(period uint64, e int64, u uint64) {
	half := int64(min(period>>(timeFrac+1), 1<<60))
	if e < -half || e > half {
		a.at = u << timeFrac
		return
	}
	a.at += period + uint64(e<<(timeFrac-3)) // an eighth of the residual
}

// gcd returns the greatest common divisor of a and b (gcd(0, b) = b).
func gcd(a, b uint64) uint64 {
	for b != 0 {
		a, b = b, a%b
	}
	return a
}

// pickOrder chooses the exponential-Golomb order that codes xs in the
// fewest bits among a few orders near the one their mean suggests.
func pickOrder(xs []uint64, sum uint64) uint {
	k, _ := pickOrderCost(xs, sum)
	return k
}

// pickOrderCost is pickOrder that also returns the estimated size in bits
// (each value costed as the smallest of its bit length).
func pickOrderCost(xs []uint64, sum uint64) (uint, int) {
	var hist [65]int
	for _, x := range xs {
		hist[bits.Len64(x)]++
	}
	guess := bits.Len64(sum / uint64(max(len(xs), 1)))
	bestK, bestCost := uint(0), -1
	for k := max(guess-3, 0); k <= min(guess+1, 62); k++ {
		cost := 0
		for b, c := range hist {
			if c == 0 {
				continue
			}
			var x uint64 // a representative value with bit length b
			if b > 0 {
				x = 1 << (b - 1)
			}
			cost += c * egCost(x, uint(k))
		}
		if bestCost < 0 || cost < bestCost {
			bestK, bestCost = uint(k), cost
		}
	}
	return bestK, bestCost + 6
}

// decodeTimes2 fills ns (len = the chunk's point count) from the column;
// first and last come from the header. zz and rc are scratch space.
func decodeTimes2(r *bitReader, ns []int64, first, last int64, zz []uint64, rc *residualCoder) ([]uint64, error) {
	ns[0] = first
	n := len(ns)
	if n < 2 {
		return zz, nil
	}
	g, period, regular, err := timeHeader(r, first, last)
	if err != nil {
		return zz, err
	}
	zz = grow(zz, n-1)
	if regular {
		clear(zz)
	} else if err := decodeResiduals(r, zz, rc); err != nil {
		return zz, err
	}
	limit := uint64(last-first) / g
	var u uint64
	var a anchor
	for i, z := range zz {
		e := unzigzag(z)
		next := a.predict(period) + uint64(e)
		if next < u || next > limit {
			return zz, errCorruptField("time column (times go backwards or past the last)")
		}
		u = next
		a.follow(period, e, u)
		ns[i+1] = first + int64(u*g)
	}
	if ns[n-1] != last {
		return zz, errCorruptField("time column (last time disagrees with the header)")
	}
	return zz, nil
}

// timeHeader reads the time column's unit, period and regular flag.
func timeHeader(r *bitReader, first, last int64) (g, period uint64, regular bool, err error) {
	gm1, err := r.expGolomb(0)
	if err != nil {
		return
	}
	if period, err = r.expGolomb(0); err != nil {
		return
	}
	g = gm1 + 1
	if g == 0 || uint64(last-first)%g != 0 {
		err = errCorruptField("time unit")
		return
	}
	regular, err = r.bit()
	return
}
