package store

import (
	"math"
	"strconv"
)

// Version-2 value column. A calibrated value is a function of the raw
// reading: often one multiplication (a unit), one addition (an offset), the
// raw value itself (a status), or else a curve that maps a repeated raw
// reading to a repeated value. The column says which, and keeps the values
// the rule does not give bit for bit as exceptions, in a float column of
// their own; otherwise it is a float column like the raw one.
//
//	2 bits      codec 2 (derived)
//	2 bits      rule: 0 value = raw, 1 raw·a, 2 raw+a, 3 the last value seen
//	            in the chunk for the same raw bits and calibration
//	64 bits     a, for rules 1 and 2
//	expGolomb0  exception count, then each one's gap from the previous
//	float col   the exceptions' values (when there are any)
//
// NaN never follows a rule (its payload after arithmetic differs between
// processors), so a NaN raw or value is always an exception.

const (
	ruleCopy = 0
	ruleMul  = 1
	ruleAdd  = 2
	ruleMemo = 3
)

// valueScratch holds the buffers a value column needs while encoding.
type valueScratch struct {
	floatScratch
	exc  []int
	miss []float64
	memo map[rawKey]uint64
	alt  bitWriter
}

// ruleGives reports whether the rule gives v from raw.
func ruleGives(rule int, a, raw, v float64) bool {
	if math.IsNaN(raw) || math.IsNaN(v) {
		return false
	}
	var got float64
	switch rule {
	case ruleCopy:
		got = raw
	case ruleMul:
		got = raw * a
	default:
		got = raw + a
	}
	return math.Float64bits(got) == math.Float64bits(v)
}

// shortest rounds a to 12 significant digits: the constant a calibration
// was most likely written with.
func shortest(a float64) float64 {
	r, err := strconv.ParseFloat(strconv.FormatFloat(a, 'g', 12, 64), 64)
	if err != nil {
		return a
	}
	return r
}

// chooseRule tries the arithmetic rules on a sample and returns the one
// most values follow, its constant and how many sampled values follow it.
func chooseRule(vals, raws []float64) (int, float64, int) {
	m := min(len(vals), floatSample)
	var mulA, addA float64
	for j := range m { // constants from the first usable pair
		i := j * len(vals) / m
		r, v := raws[i], vals[i]
		if r != 0 && !math.IsNaN(r) && !math.IsInf(r, 0) && !math.IsNaN(v) && !math.IsInf(v, 0) {
			mulA, addA = v/r, v-r
			break
		}
	}
	type cand struct {
		rule int
		a    float64
	}
	cands := [...]cand{{ruleCopy, 0}, {ruleMul, mulA}, {ruleMul, shortest(mulA)}, {ruleAdd, addA}, {ruleAdd, shortest(addA)}}
	best, bestHits := cands[0], -1
	for _, c := range cands {
		hits := 0
		for j := range m {
			i := j * len(vals) / m
			if ruleGives(c.rule, c.a, raws[i], vals[i]) {
				hits++
			}
		}
		if hits > bestHits {
			best, bestHits = c, hits
		}
	}
	return best.rule, best.a, bestHits
}

// encodeValues2 writes the calibrated values (at least one).
func encodeValues2(w *bitWriter, vals, raws []float64, cals []uint32, s *valueScratch) {
	if allSame(vals) { // a float column of one value costs less than any rule
		encodeFloats2(w, vals, &s.floatScratch)
		return
	}
	rule, a, hits := chooseRule(vals, raws)
	m := min(len(vals), floatSample)
	if hits*2 >= m {
		s.exc, s.miss = s.exc[:0], s.miss[:0]
		for i, v := range vals {
			if !ruleGives(rule, a, raws[i], v) {
				s.exc, s.miss = append(s.exc, i), append(s.miss, v)
			}
		}
		if len(s.exc)*8 <= len(vals) {
			writeDerived(w, rule, a, s)
			return
		}
	}
	start := w.bits()
	encodeFloats2(w, vals, &s.floatScratch)
	if len(s.floatScratch.exc)*8 <= len(vals) && w.bits()-start < 4*len(vals) {
		return // decimal and small: a memo cannot do much better
	}
	// Not decimal: try the memo of repeated raw readings, keep the smaller.
	if s.memo == nil {
		s.memo = make(map[rawKey]uint64, 256)
	}
	clear(s.memo)
	s.exc, s.miss = s.exc[:0], s.miss[:0]
	for i, v := range vals {
		k := rawKey{math.Float64bits(raws[i]), cals[i]}
		if old, ok := s.memo[k]; ok && old == math.Float64bits(v) {
			continue
		}
		s.memo[k] = math.Float64bits(v)
		s.exc, s.miss = append(s.exc, i), append(s.miss, v)
	}
	s.alt.reset()
	writeDerived(&s.alt, ruleMemo, 0, s)
	if s.alt.bits() < w.bits()-start {
		truncateBits(w, start)
		appendBits(w, s.alt.bytes(), s.alt.bits())
	}
}

// writeDerived writes a derived column with s.exc and s.miss as exceptions.
func writeDerived(w *bitWriter, rule int, a float64, s *valueScratch) {
	w.write(col2Derived, 2)
	w.write(uint64(rule), 2)
	if rule == ruleMul || rule == ruleAdd {
		w.write(math.Float64bits(a), 64)
	}
	w.expGolomb(uint64(len(s.exc)), 0)
	last := -1
	for _, i := range s.exc {
		w.expGolomb(uint64(i-last-1), 0)
		last = i
	}
	if len(s.miss) > 0 {
		encodeFloats2(w, s.miss, &s.floatScratch)
	}
}

// truncateBits cuts w back to its first n bits.
func truncateBits(w *bitWriter, n int) {
	full := w.bytes()
	w.reset()
	appendBits(w, full, n)
}

// valueDecoder holds the buffers a value column needs while decoding.
type valueDecoder struct {
	is   intScratch
	ints []int64
	exc  []int
	miss []float64
	memo map[rawKey]float64
}

// decodeValues2 reads len(out) values given the raw values and calibrations.
func decodeValues2(r *bitReader, out, raws []float64, cals []uint32, d *valueDecoder) error {
	save := *r
	c, err := r.read(2)
	if err != nil {
		return err
	}
	if c != col2Derived {
		*r = save
		d.ints, err = decodeFloats2(r, out, d.ints, &d.is)
		return err
	}
	rb, err := r.read(2)
	if err != nil {
		return err
	}
	rule := int(rb)
	var a float64
	if rule == ruleMul || rule == ruleAdd {
		ab, err := r.read(64)
		if err != nil {
			return err
		}
		a = math.Float64frombits(ab)
	}
	nexc, err := r.expGolomb(0)
	if err != nil {
		return err
	}
	if nexc > uint64(len(out)) {
		return errCorruptField("exception count")
	}
	d.exc = grow(d.exc, int(nexc))
	at := -1
	for j := range d.exc {
		gap, err := r.expGolomb(0)
		if err != nil {
			return err
		}
		if gap >= uint64(len(out)-at-1) {
			return errCorruptField("exception position")
		}
		at += int(gap) + 1
		d.exc[j] = at
	}
	d.miss = grow(d.miss, int(nexc))
	if nexc > 0 {
		if d.ints, err = decodeFloats2(r, d.miss, d.ints, &d.is); err != nil {
			return err
		}
	}
	return applyRule(rule, a, out, raws, cals, d)
}

// applyRule fills out from the rule and the exceptions.
func applyRule(rule int, a float64, out, raws []float64, cals []uint32, d *valueDecoder) error {
	if rule == ruleMemo {
		if d.memo == nil {
			d.memo = make(map[rawKey]float64, 256)
		}
		clear(d.memo)
	}
	j := 0
	for i, raw := range raws {
		if j < len(d.exc) && d.exc[j] == i {
			out[i] = d.miss[j]
			if rule == ruleMemo {
				d.memo[rawKey{math.Float64bits(raw), cals[i]}] = d.miss[j]
			}
			j++
			continue
		}
		switch rule {
		case ruleCopy:
			out[i] = raw
		case ruleMul:
			out[i] = raw * a
		case ruleAdd:
			out[i] = raw + a
		default:
			v, ok := d.memo[rawKey{math.Float64bits(raw), cals[i]}]
			if !ok {
				return errCorruptField("repeated-value rule")
			}
			out[i] = v
		}
	}
	return nil
}
