package store

import (
	"math/bits"
	"slices"
)

// Version-2 time column. Times are kept as whole multiples of the chunk's
// time unit (the greatest common divisor of its time steps: the store's
// resolution, 1 ms by default, or coarser for a clean schedule, or 1 ns for
// a migrated version-1 chunk), so the unit costs nothing per point. Each
// time is predicted as the previous anchor plus the chunk's period P (the
// median step, in units); the anchor follows the times slowly (a quarter of
// each residual), so a poller's jitter costs its own spread, not the spread
// of a difference of two jitters, and a step further than P/2 from the
// prediction (a missed poll, a restart) re-anchors at once. Residuals are
// zigzagged and written as exponential-Golomb codes of one order per chunk,
// chosen from a histogram of their lengths among a few orders near their
// mean. A chunk whose times are exactly periodic writes one flag bit.
//
//	expGolomb0  unit − 1 (ns)
//	expGolomb0  P (units)
//	1 bit       1: every residual is zero (no more bits)
//	6 bits      order k, then n−1 residual codes

// timeSample bounds the steps sorted to find the period.
const timeSample = 31

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
	var sample [timeSample]uint64
	m := min(n-1, timeSample)
	for j := range m {
		i := 1 + j*(n-1)/m
		sample[j] = uint64(ns[i]-ns[i-1]) / g
	}
	slices.Sort(sample[:m])
	period := sample[(m-1)/2]
	w.expGolomb(g-1, 0)
	w.expGolomb(period, 0)

	zz = zz[:0]
	var u, anchor, sum uint64
	allZero := true
	for i := 1; i < n; i++ {
		u += uint64(ns[i]-ns[i-1]) / g
		e := int64(u - anchor - period)
		anchor = nextAnchor(anchor, period, e, u)
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

// nextAnchor moves the anchor after a time u whose residual from the
// prediction anchor+period was e.
func nextAnchor(anchor, period uint64, e int64, u uint64) uint64 {
	half := int64(min(period/2, 1<<62))
	if e < -half || e > half {
		return u
	}
	return anchor + period + uint64(e>>2)
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
	gm1, err := r.expGolomb(0)
	if err != nil {
		return err
	}
	period, err := r.expGolomb(0)
	if err != nil {
		return err
	}
	g := gm1 + 1
	span := uint64(last - first)
	if g == 0 || span%g != 0 {
		return errCorruptField("time unit")
	}
	regular, err := r.bit()
	if err != nil {
		return err
	}
	k := uint64(0)
	if !regular {
		if k, err = r.read(6); err != nil {
			return err
		}
		if k > 62 {
			return errCorruptField("time code order")
		}
	}
	var u, anchor uint64
	for i := 1; i < n; i++ {
		var z uint64
		if !regular {
			if z, err = r.expGolomb(uint(k)); err != nil {
				return err
			}
		}
		e := unzigzag(z)
		next := anchor + period + uint64(e)
		if next < u || next > span/g {
			return errCorruptField("time column (times go backwards or past the last)")
		}
		u = next
		anchor = nextAnchor(anchor, period, e, u)
		ns[i] = first + int64(u*g)
	}
	if ns[n-1] != last {
		return errCorruptField("time column (last time disagrees with the header)")
	}
	return nil
}
