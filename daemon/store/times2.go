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
// zigzagged and written as exponential-Golomb codes of one order per chunk,
// chosen from a histogram of their lengths among a few orders near their
// mean. A chunk whose times all fall on their predictions writes one flag
// bit.
//
//	expGolomb0  unit − 1 (ns)
//	expGolomb0  P·256 (units)
//	1 bit       1: every residual is zero (no more bits)
//	6 bits      order k, then n−1 residual codes

// timeSample bounds the steps sorted to find the median step.
const timeSample = 31

// timeFrac is the number of fraction bits of P and the anchor.
const timeFrac = 8

// encodeTimes2 writes the time column for sorted ns (the first time and
// the span are in the header). zz is scratch space.
func encodeTimes2(w *bitWriter, ns []int64, zz []uint64) []uint64 {
	n := len(ns)
	if n < 2 {
		return zz
	}
	var g uint64
	for i := 1; i < n && g != 1; i++ {
		g = gcd(g, uint64(ns[i]-ns[i-1]))
	}
	if g == 0 {
		g = 1
	}
	period := periodOf(ns, g)
	w.expGolomb(g-1, 0)
	w.expGolomb(period, 0)

	zz = zz[:0]
	var u, sum uint64
	var a anchor
	allZero := true
	for i := 1; i < n; i++ {
		u += uint64(ns[i]-ns[i-1]) / g
		e := int64(u - a.predict(period))
		a.follow(period, e, u)
		z := zigzag(e)
		zz = append(zz, z)
		sum += min(z, 1<<40)
		allZero = allZero && z == 0
	}
	w.bit(allZero)
	if allZero {
		return zz
	}
	k := pickOrder(zz, sum)
	w.write(uint64(k), 6)
	for _, z := range zz {
		w.expGolomb(z, k)
	}
	return zz
}

// periodOf returns the period of sorted times in units of g, times 256:
// the mean of the steps within half a median step of the median (so
// missed polls and restarts do not count), which for a steady schedule is
// very nearly the span over the number of steps.
func periodOf(ns []int64, g uint64) uint64 {
	var sample [timeSample]uint64
	n := len(ns)
	m := min(n-1, timeSample)
	for j := range m {
		i := 1 + j*(n-1)/m
		sample[j] = uint64(ns[i]-ns[i-1]) / g
	}
	slices.Sort(sample[:m])
	med := sample[(m-1)/2]
	if med == 0 || med >= 1<<(62-timeFrac) {
		return 0
	}
	var sum, count uint64
	for i := 1; i < n; i++ {
		if d := uint64(ns[i]-ns[i-1]) / g; d >= med-med/2 && d <= med+med/2 {
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
	return bestK
}

// decodeTimes2 fills ns (len = the chunk's point count) from the column;
// first and last come from the header.
func decodeTimes2(r *bitReader, ns []int64, first, last int64) error {
	ns[0] = first
	n := len(ns)
	if n < 2 {
		return nil
	}
	g, period, regular, k, err := timeHeader(r, first, last)
	if err != nil {
		return err
	}
	limit := uint64(last-first) / g
	var u uint64
	var a anchor
	for i := 1; i < n; i++ {
		var z uint64
		if !regular {
			if z, err = r.expGolomb(k); err != nil {
				return err
			}
		}
		e := unzigzag(z)
		next := a.predict(period) + uint64(e)
		if next < u || next > limit {
			return errCorruptField("time column (times go backwards or past the last)")
		}
		u = next
		a.follow(period, e, u)
		ns[i] = first + int64(u*g)
	}
	if ns[n-1] != last {
		return errCorruptField("time column (last time disagrees with the header)")
	}
	return nil
}

// timeHeader reads the time column's unit, period, regular flag and order.
func timeHeader(r *bitReader, first, last int64) (g, period uint64, regular bool, k uint, err error) {
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
	if regular, err = r.bit(); err != nil || regular {
		return
	}
	var kb uint64
	if kb, err = r.read(6); err == nil && kb > 62 {
		err = errCorruptField("time code order")
	}
	return g, period, regular, uint(kb), err
}
