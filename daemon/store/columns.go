package store

import (
	"math"
)

// Float column codecs; a float column starts with its 2-bit codec id.
const (
	codecXOR     = 0 // XOR with the previous value
	codecDecimal = 1 // decimal mantissa/exponent deltas
	codecRatio   = 2 // XOR with a prediction scaled by the raw values (values only)
)

// encodeFloats writes vals with whichever codec is smallest for them. raws,
// when not nil, are the raw values paired with vals and enable codecRatio.
func encodeFloats(w *bitWriter, vals, raws []float64) {
	codecs := []uint64{codecXOR, codecDecimal}
	if raws != nil {
		codecs = append(codecs, codecRatio)
	}
	var best bitWriter
	bestCodec, bestBits := uint64(0), -1
	for _, c := range codecs {
		var t bitWriter
		switch c {
		case codecXOR:
			encodeXOR(&t, vals, nil)
		case codecDecimal:
			encodeDecimal(&t, vals)
		case codecRatio:
			encodeXOR(&t, vals, raws)
		}
		if bestBits < 0 || t.bits() < bestBits {
			bestCodec, bestBits, best = c, t.bits(), t
		}
	}
	w.write(bestCodec, 2)
	appendBits(w, best.bytes(), bestBits)
}

// decodeFloats reads len(out) values written by encodeFloats.
func decodeFloats(r *bitReader, out, raws []float64) error {
	c, err := r.read(2)
	if err != nil {
		return err
	}
	switch c {
	case codecXOR:
		return decodeXOR(r, out, nil)
	case codecDecimal:
		return decodeDecimal(r, out)
	case codecRatio:
		if raws == nil {
			return errCorruptField("raw column codec")
		}
		return decodeXOR(r, out, raws)
	}
	return errCorruptField("float codec id")
}

// appendBits copies the first n bits of src into w.
func appendBits(w *bitWriter, src []byte, n int) {
	for i := 0; n > 0; i++ {
		take := min(n, 8)
		w.write(uint64(src[i]>>(8-take)), uint(take))
		n -= take
	}
}

// A rawKey identifies a raw reading under one calibration.
type rawKey struct {
	raw uint64
	cal uint32
}

// encodeValues writes the calibrated values. A calibration maps the same raw
// reading to the same value, and a gauge with few significant digits repeats
// raw readings often, so a value equal to the last one seen for the same
// (raw, calibration) is marked with one bit; the others go through
// encodeFloats. A leading bit says whether the marks are used at all.
func encodeValues(w *bitWriter, vals, raws []float64, cals []uint32) {
	var plain bitWriter
	encodeFloats(&plain, vals, raws)

	var marked bitWriter
	seen := make(map[rawKey]uint64, 64)
	var missV, missR []float64
	for i, v := range vals {
		k := rawKey{math.Float64bits(raws[i]), cals[i]}
		b := math.Float64bits(v)
		if old, ok := seen[k]; ok && old == b {
			marked.bit(true)
			continue
		}
		marked.bit(false)
		seen[k] = b
		missV, missR = append(missV, v), append(missR, raws[i])
	}
	encodeFloats(&marked, missV, missR)

	if nm, np := marked.bits(), plain.bits(); nm < np {
		w.bit(true)
		appendBits(w, marked.bytes(), nm)
	} else {
		w.bit(false)
		appendBits(w, plain.bytes(), np)
	}
}

// decodeValues reads what encodeValues wrote into out.
func decodeValues(r *bitReader, out, raws []float64, cals []uint32) error {
	usesMarks, err := r.bit()
	if err != nil {
		return err
	}
	if !usesMarks {
		return decodeFloats(r, out, raws)
	}
	hit := make([]bool, len(out))
	var missR []float64
	for i := range hit {
		if hit[i], err = r.bit(); err != nil {
			return err
		}
		if !hit[i] {
			missR = append(missR, raws[i])
		}
	}
	missV := make([]float64, len(missR))
	if err := decodeFloats(r, missV, missR); err != nil {
		return err
	}
	seen := make(map[rawKey]float64, 64)
	j := 0
	for i := range out {
		k := rawKey{math.Float64bits(raws[i]), cals[i]}
		if hit[i] {
			v, ok := seen[k]
			if !ok {
				return errCorruptField("repeated-value mark")
			}
			out[i] = v
			continue
		}
		out[i] = missV[j]
		seen[k] = missV[j]
		j++
	}
	return nil
}

// encodeRuns writes a run-length coded column of small integers.
func encodeRuns(w *bitWriter, vals []uint32) {
	var runs [][2]uint64
	for i, v := range vals {
		if i > 0 && uint64(v) == runs[len(runs)-1][0] {
			runs[len(runs)-1][1]++
			continue
		}
		runs = append(runs, [2]uint64{uint64(v), 1})
	}
	w.expGolomb(uint64(len(runs)), 0)
	for _, r := range runs {
		w.expGolomb(r[0], 0)
		w.expGolomb(r[1]-1, 0)
	}
}

// decodeRuns reads len(out) values written by encodeRuns.
func decodeRuns(r *bitReader, out []uint32) error {
	n, err := r.expGolomb(0)
	if err != nil {
		return err
	}
	i := 0
	for ; n > 0; n-- {
		v, err := r.expGolomb(0)
		if err != nil {
			return err
		}
		length, err := r.expGolomb(0)
		if err != nil {
			return err
		}
		if v > math.MaxUint32 || length >= uint64(len(out)-i) {
			return errCorruptField("run-length column")
		}
		for range length + 1 {
			out[i] = uint32(v)
			i++
		}
	}
	if i != len(out) {
		return errCorruptField("run-length column")
	}
	return nil
}
