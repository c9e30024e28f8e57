package store

import (
	"math"
	"strconv"
)

// Decimal coding. Gauges report a few significant digits (a controller shows
// 1.23E-05 mbar; a meter shows 4.567 V), so a raw value is usually the float64
// nearest to m·10^e with a small integer m. The coder stores m and e as
// deltas from the previous value, rescaling the previous mantissa when the
// exponent changes, so a steady or slowly drifting reading costs a few bits.
// A value that no D-digit mantissa reproduces bit for bit (NaN, ±Inf, −0,
// full-precision results of arithmetic) is stored as its 64 raw bits.

// maxDigits bounds the mantissa digits tried; longer values are escaped
// (their code would be no shorter than the raw bits).
const maxDigits = 15

// pow10 holds the powers of ten that float64 represents exactly.
var pow10 = [...]float64{1e0, 1e1, 1e2, 1e3, 1e4, 1e5, 1e6, 1e7, 1e8, 1e9, 1e10,
	1e11, 1e12, 1e13, 1e14, 1e15, 1e16, 1e17, 1e18, 1e19, 1e20, 1e21, 1e22}

// fromDecimal returns the float64 nearest to m·10^e (correctly rounded).
func fromDecimal(m int64, e int) float64 {
	if m > -(1<<53) && m < 1<<53 { // m exact: one correctly rounded IEEE op
		if e >= 0 && e < len(pow10) {
			return float64(m) * pow10[e]
		}
		if e < 0 && -e < len(pow10) {
			return float64(m) / pow10[-e]
		}
	}
	var buf [48]byte
	s := strconv.AppendInt(buf[:0], m, 10)
	s = append(s, 'e')
	s = strconv.AppendInt(s, int64(e), 10)
	v, err := strconv.ParseFloat(string(s), 64)
	if err != nil && v == 0 { // underflow below the smallest subnormal
		return 0
	}
	return v // ±Inf on overflow, which never matches a finite input
}

// toDecimal finds m with exactly d digits and e such that fromDecimal(m, e)
// has v's bits. ok is false when no such pair exists.
func toDecimal(v float64, d int) (m int64, e int, ok bool) {
	if v == 0 || math.IsNaN(v) || math.IsInf(v, 0) {
		return 0, 0, v == 0 && !math.Signbit(v)
	}
	e10 := int(math.Floor(math.Log10(math.Abs(v))))
	e = e10 - d + 1
	var scaled float64
	if e <= 0 && -e < len(pow10) {
		scaled = v * pow10[-e]
	} else {
		scaled = v / math.Pow(10, float64(e))
	}
	if math.Abs(scaled) >= 1e17 {
		return 0, 0, false
	}
	m = int64(math.Round(scaled))
	return m, e, math.Float64bits(fromDecimal(m, e)) == math.Float64bits(v)
}

// digitsOf returns the fewest mantissa digits that reproduce v: those of
// its shortest decimal form (strconv's shortest round-trip formatting, whose
// parsing rounds exactly as fromDecimal does), or maxDigits+1 when that is
// longer than maxDigits or v has no decimal form (NaN, ±Inf, −0).
func digitsOf(v float64) int {
	if v == 0 && !math.Signbit(v) {
		return 1
	}
	if v == 0 || math.IsNaN(v) || math.IsInf(v, 0) {
		return maxDigits + 1
	}
	var buf [32]byte
	s := strconv.AppendFloat(buf[:0], math.Abs(v), 'e', -1, 64) // d.ddde±XX
	n := 0
	for _, c := range s {
		if c == 'e' {
			break
		}
		if c != '.' {
			n++
		}
	}
	return min(n, maxDigits+1)
}

// chooseDigits picks the mantissa width that minimises the estimated size:
// every extra digit costs about log2(10) bits per value, every escape 64.
// It also returns each value's own digit count.
func chooseDigits(vals []float64) (int, []int8) {
	var count [maxDigits + 2]int
	digits := make([]int8, len(vals))
	for i, v := range vals {
		digits[i] = int8(digitsOf(v))
		count[digits[i]]++
	}
	best, bestCost := 1, math.Inf(1)
	escaped := len(vals)
	for d := 1; d <= maxDigits; d++ {
		escaped -= count[d]
		cost := float64(len(vals)-escaped)*3.33*float64(d) + float64(escaped)*66
		if cost < bestCost {
			best, bestCost = d, cost
		}
	}
	return best, digits
}

// decimalStep is one value as the decimal coder sees it.
type decimalStep struct {
	escape bool
	de     int64  // exponent change
	dm     uint64 // zigzag mantissa change after rescaling
}

// rescale expresses mantissa m at exponent from in exponent to (rounded).
func rescale(m int64, from, to int) int64 {
	for ; from > to; from-- {
		if m > math.MaxInt64/10 || m < math.MinInt64/10 {
			return 0
		}
		m *= 10
	}
	for ; from < to; from++ {
		m /= 10
	}
	return m
}

// decimalSteps turns vals into steps at mantissa width d, given each
// value's own digit count.
func decimalSteps(vals []float64, digits []int8, d int) []decimalStep {
	steps := make([]decimalStep, len(vals))
	var pm int64
	pe := 0
	for i, v := range vals {
		var m int64
		var e int
		ok := int(digits[i]) <= d
		if ok {
			m, e, ok = toDecimal(v, d)
		}
		if !ok {
			steps[i].escape = true
			continue
		}
		if v == 0 {
			e = pe
		}
		steps[i] = decimalStep{de: int64(e - pe), dm: zigzag(m - rescale(pm, pe, e))}
		pm, pe = m, e
	}
	return steps
}

// encodeDecimal writes vals: width d (4 bits), order k (6 bits), then per
// value '0'+mantissa change, '10'+exponent change+mantissa change, or '11'+raw bits.
func encodeDecimal(w *bitWriter, vals []float64) {
	d, digits := chooseDigits(vals)
	steps := decimalSteps(vals, digits, d)
	dms := make([]uint64, 0, len(steps))
	for _, s := range steps {
		if !s.escape {
			dms = append(dms, s.dm)
		}
	}
	k, _ := bestOrder(dms)
	w.write(uint64(d), 4)
	w.write(uint64(k), 6)
	for i, s := range steps {
		switch {
		case s.escape:
			w.write(0b11, 2)
			w.write(math.Float64bits(vals[i]), 64)
		case s.de == 0:
			w.bit(false)
			w.expGolomb(s.dm, k)
		default:
			w.write(0b10, 2)
			w.expGolomb(zigzag(s.de), 0)
			w.expGolomb(s.dm, k)
		}
	}
}

// decodeDecimal reads len(out) values written by encodeDecimal.
func decodeDecimal(r *bitReader, out []float64) error {
	d, err := r.read(4)
	if err != nil {
		return err
	}
	k, err := r.read(6)
	if err != nil {
		return err
	}
	if d == 0 || d > maxDigits || k > 62 {
		return errCorruptField("decimal header")
	}
	var pm int64
	pe := 0
	for i := range out {
		if out[i], pm, pe, err = decimalNext(r, uint(k), pm, pe); err != nil {
			return err
		}
	}
	return nil
}

// decimalNext reads one value given the previous mantissa and exponent.
func decimalNext(r *bitReader, k uint, pm int64, pe int) (float64, int64, int, error) {
	tag, err := r.bit()
	if err != nil {
		return 0, 0, 0, err
	}
	e := pe
	if tag {
		esc, err := r.bit()
		if err != nil {
			return 0, 0, 0, err
		}
		if esc {
			b, err := r.read(64)
			return math.Float64frombits(b), pm, pe, err
		}
		de, err := r.expGolomb(0)
		if err != nil {
			return 0, 0, 0, err
		}
		e = pe + int(unzigzag(de))
		if e < -400 || e > 400 {
			return 0, 0, 0, errCorruptField("decimal exponent")
		}
	}
	dm, err := r.expGolomb(k)
	if err != nil {
		return 0, 0, 0, err
	}
	m := rescale(pm, pe, e) + unzigzag(dm)
	return fromDecimal(m, e), m, e, nil
}
