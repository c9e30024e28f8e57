package store

import (
	"math"
	"math/bits"
)

// Version-2 float columns. Readings are decimals with few digits (a gauge
// shows 1.23E-05, a thermometer 81.4), so most float64 values are the
// nearest double to n·10^x for a small integer n and one exponent x per
// column. The decimal coder (after Afroozeh, Kuffó and Boncz, "ALP:
// Adaptive Lossless floating-Point Compression", SIGMOD 2024) picks x from
// a sample of the column, turns every value into its n, checks that n gives
// the value back bit for bit, and keeps the values that do not (NaN, ±Inf,
// −0, subnormals, values with more digits) as exceptions, exactly. The
// integers go through the bit-packing of pack.go. A column whose values are
// not decimals is written with XOR (xor.go) when that is smaller.
//
//	2 bits       codec: 0 decimal, 1 XOR, 2 derived from raw (values only), 3 one repeated value
//	decimal:     6 bits x+22; expGolomb0 exception count; per exception
//	             expGolomb0 gap from the previous one and its 64 bits;
//	             then the integers (exceptions hold the previous integer)
//	repeated:    the 64 bits of the value

const (
	col2Decimal = 0
	col2XOR     = 1
	col2Derived = 2
	col2Same    = 3
)

// maxExp bounds the decimal exponent: 10^x is exact in float64 for
// |x| ≤ 22, so one correctly rounded multiply or divide turns n into the
// value, the same on every platform.
const maxExp = 22

// maxMantissa bounds n so that float64(n) is exact.
const maxMantissa = 1 << 53

// floatSample bounds the values the exponent is chosen from.
const floatSample = 32

// decimalInt returns n with fromDecimal(n, x) == v bit for bit, if any.
func decimalInt(v float64, x int) (int64, bool) {
	var s float64
	if x < 0 {
		s = v * pow10[-x]
	} else {
		s = v / pow10[x]
	}
	if !(s > -maxMantissa && s < maxMantissa) { // also refuses NaN
		return 0, false
	}
	n := int64(math.Round(s))
	return n, math.Float64bits(decimalValue(n, x)) == math.Float64bits(v)
}

// decimalValue is fromDecimal's fast path: n·10^x for |n| < 2^53, |x| ≤ 22.
func decimalValue(n int64, x int) float64 {
	if x < 0 {
		return float64(n) / pow10[-x]
	}
	return float64(n) * pow10[x]
}

// coarsestExp returns the largest exponent x at which v is a decimal
// n·10^x with |n| < 2^53, or ok = false when there is none.
func coarsestExp(v float64) (int, bool) {
	if v == 0 {
		return maxExp, !math.Signbit(v)
	}
	a := math.Abs(v)
	if math.IsNaN(a) || math.IsInf(a, 0) || a < 1e-22 {
		return 0, false
	}
	top := min(int(math.Floor(math.Log10(a)))+1, maxExp)
	for x := top; x >= max(top-17, -maxExp); x-- {
		if _, ok := decimalInt(v, x); ok {
			return x, true
		}
	}
	return 0, false
}

// chooseExp picks the column exponent from a sample: among the sampled
// values' own coarsest exponents, the one with the smallest estimated size
// (exceptions at 72 bits, others at the width of the sampled range).
func chooseExp(vals []float64) int {
	var xs [floatSample]int
	var oks [floatSample]bool
	m := min(len(vals), floatSample)
	for j := range m {
		xs[j], oks[j] = coarsestExp(vals[j*len(vals)/m])
	}
	best, bestCost := 0, -1
	var tried [2*maxExp + 1]bool
	for c := range m {
		if !oks[c] || tried[xs[c]+maxExp] {
			continue
		}
		x := xs[c]
		tried[x+maxExp] = true
		cost, lo, hi, good := 0, int64(0), int64(0), 0
		for j := range m {
			n, ok := int64(0), oks[j] && xs[j] >= x
			if ok {
				n, ok = decimalInt(vals[j*len(vals)/m], x)
			}
			if !ok {
				cost += 72
				continue
			}
			if good == 0 {
				lo, hi = n, n
			}
			lo, hi, good = min(lo, n), max(hi, n), good+1
		}
		cost += good * bits.Len64(uint64(hi-lo))
		if bestCost < 0 || cost < bestCost || (cost == bestCost && x > best) {
			best, bestCost = x, cost
		}
	}
	return best
}

// floatScratch holds the buffers a float column needs while encoding.
type floatScratch struct {
	ints []int64
	exc  []int
	tmp  bitWriter
	is   intScratch
}

// encodeFloats2 writes vals (at least one) with the smallest of the
// decimal, XOR and repeated-value codecs.
func encodeFloats2(w *bitWriter, vals []float64, s *floatScratch) {
	if allSame(vals) {
		if _, ok := decimalInt(vals[0], 0); !ok { // a decimal repeated costs less below
			w.write(col2Same, 2)
			w.write(math.Float64bits(vals[0]), 64)
			return
		}
	}
	x := chooseExp(vals)
	s.ints, s.exc = s.ints[:0], s.exc[:0]
	for i, v := range vals {
		n, ok := decimalInt(v, x)
		if !ok {
			s.exc = append(s.exc, i)
		}
		s.ints = append(s.ints, n)
	}
	if len(s.exc)*8 > len(vals) { // many exceptions: XOR may be smaller
		s.tmp.reset()
		encodeXOR(&s.tmp, vals, nil)
		if xorBits := s.tmp.bits(); xorBits < decimalCost(vals, s)+64*len(s.exc) {
			w.write(col2XOR, 2)
			appendBits(w, s.tmp.bytes(), xorBits)
			return
		}
	}
	w.write(col2Decimal, 2)
	w.write(uint64(x+maxExp), 6)
	writeExceptions(w, vals, s.exc, s.ints)
	encodeInts(w, s.ints, &s.is)
}

// allSame reports whether every value has the first one's bits.
func allSame(vals []float64) bool {
	first := math.Float64bits(vals[0])
	for _, v := range vals[1:] {
		if math.Float64bits(v) != first {
			return false
		}
	}
	return true
}

// decimalCost estimates the decimal codec's bits for the integers.
func decimalCost(vals []float64, s *floatScratch) int {
	fillExceptions(s.ints, s.exc)
	var lo, hi int64 = s.ints[0], s.ints[0]
	for _, n := range s.ints {
		lo, hi = min(lo, n), max(hi, n)
	}
	return len(vals)*bits.Len64(uint64(hi-lo)) + 16
}

// fillExceptions replaces each exception's integer with the previous
// integer (the first good one for leading exceptions), so exceptions do not
// widen the packed blocks.
func fillExceptions(ints []int64, exc []int) {
	if len(exc) == 0 {
		return
	}
	fill, j := int64(0), 0
	for i := range ints { // the first integer that is not an exception
		if j < len(exc) && exc[j] == i {
			j++
			continue
		}
		fill = ints[i]
		break
	}
	j = 0
	for i := range ints {
		if j < len(exc) && exc[j] == i {
			ints[i] = fill
			j++
		}
		fill = ints[i]
	}
}

// writeExceptions writes the exception list and patches the integers.
func writeExceptions(w *bitWriter, vals []float64, exc []int, ints []int64) {
	fillExceptions(ints, exc)
	w.expGolomb(uint64(len(exc)), 0)
	last := -1
	for _, i := range exc {
		w.expGolomb(uint64(i-last-1), 0)
		w.write(math.Float64bits(vals[i]), 64)
		last = i
	}
}

// decodeFloats2 reads len(out) values of a column that is not derived.
func decodeFloats2(r *bitReader, out []float64, ints []int64, is *intScratch) ([]int64, error) {
	c, err := r.read(2)
	if err != nil {
		return ints, err
	}
	switch c {
	case col2Same:
		b, err := r.read(64)
		for i := range out {
			out[i] = math.Float64frombits(b)
		}
		return ints, err
	case col2XOR:
		return ints, decodeXOR(r, out, nil)
	case col2Decimal:
		return decodeDecimal2(r, out, ints, is)
	}
	return ints, errCorruptField("float column codec")
}

// decodeDecimal2 reads a decimal column after its codec id.
func decodeDecimal2(r *bitReader, out []float64, ints []int64, is *intScratch) ([]int64, error) {
	xb, err := r.read(6)
	if err != nil {
		return ints, err
	}
	x := int(xb) - maxExp
	if x > maxExp {
		return ints, errCorruptField("decimal exponent")
	}
	nexc, err := r.expGolomb(0)
	if err != nil {
		return ints, err
	}
	if nexc > uint64(len(out)) {
		return ints, errCorruptField("exception count")
	}
	// Exceptions come first in the stream; keep their places and bits in
	// out's tail, which the integers fill only afterwards.
	type exception struct {
		at   int
		bits uint64
	}
	var excBuf [16]exception
	excs := excBuf[:0]
	at := -1
	for range nexc {
		gap, err := r.expGolomb(0)
		if err != nil {
			return ints, err
		}
		if gap >= uint64(len(out)-at-1) {
			return ints, errCorruptField("exception position")
		}
		at += int(gap) + 1
		b, err := r.read(64)
		if err != nil {
			return ints, err
		}
		excs = append(excs, exception{at, b})
	}
	ints = grow(ints, len(out))
	if err := decodeInts(r, ints, is); err != nil {
		return ints, err
	}
	for i, n := range ints {
		if n <= -maxMantissa || n >= maxMantissa {
			return ints, errCorruptField("decimal mantissa")
		}
		out[i] = decimalValue(n, x)
	}
	for _, e := range excs {
		out[e.at] = math.Float64frombits(e.bits)
	}
	return ints, nil
}

// grow returns s resized to n, reusing its array when it is big enough.
func grow[T any](s []T, n int) []T {
	if cap(s) >= n {
		return s[:n]
	}
	return make([]T, n)
}
