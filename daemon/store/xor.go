package store

import (
	"math"
	"math/bits"
)

// XOR coding (after the time-series compression scheme published by
// Pelkonen et al., "Gorilla: A Fast, Scalable, In-Memory Time Series
// Database", VLDB 2015, §4.1.2): each float64 is XORed with a prediction and
// only the bits between the leading and trailing zeros of the result are kept.
// It is lossless for every bit pattern, NaN payloads included.

// A predictor guesses the i-th value's bits from the values before it.
type predictor func(i int, prev uint64) uint64

// xorState carries the previous window between values.
type xorState struct {
	lead, trail uint
	valid       bool
}

// put writes one value given its prediction.
func (s *xorState) put(w *bitWriter, v, pred uint64) {
	x := v ^ pred
	if x == 0 {
		w.bit(false)
		return
	}
	w.bit(true)
	lead, trail := uint(bits.LeadingZeros64(x)), uint(bits.TrailingZeros64(x))
	if s.valid && lead >= s.lead && trail >= s.trail {
		w.bit(false)
		w.write(x>>s.trail, 64-s.lead-s.trail)
		return
	}
	w.bit(true)
	w.write(uint64(lead), 6)
	w.write(uint64(64-lead-trail-1), 6) // meaningful bits, 1..64, stored minus one
	w.write(x>>trail, 64-lead-trail)
	s.lead, s.trail, s.valid = lead, trail, true
}

// get reads one value given its prediction.
func (s *xorState) get(r *bitReader, pred uint64) (uint64, error) {
	changed, err := r.bit()
	if err != nil || !changed {
		return pred, err
	}
	fresh, err := r.bit()
	if err != nil {
		return 0, err
	}
	if fresh {
		lead, err := r.read(6)
		if err != nil {
			return 0, err
		}
		m, err := r.read(6)
		if err != nil {
			return 0, err
		}
		if lead+m+1 > 64 {
			return 0, errCorruptField("XOR window")
		}
		s.lead, s.trail, s.valid = uint(lead), uint(64-lead-m-1), true
	} else if !s.valid {
		return 0, errCorruptField("XOR window")
	}
	x, err := r.read(64 - s.lead - s.trail)
	if err != nil {
		return 0, err
	}
	return pred ^ x<<s.trail, nil
}

// encodeXOR writes vals XORed with the previous value (or with ratioPredict
// when raws is not nil).
func encodeXOR(w *bitWriter, vals, raws []float64) {
	var s xorState
	var prev uint64
	for i, v := range vals {
		b := math.Float64bits(v)
		pred := prev
		if raws != nil && i > 0 {
			pred = ratioPredict(vals[i-1], raws[i-1], raws[i])
		}
		s.put(w, b, pred)
		prev = b
	}
}

// decodeXOR reads n values written by encodeXOR into out; raws as given to it.
func decodeXOR(r *bitReader, out, raws []float64) error {
	var s xorState
	var prev uint64
	for i := range out {
		pred := prev
		if raws != nil && i > 0 {
			pred = ratioPredict(out[i-1], raws[i-1], raws[i])
		}
		b, err := s.get(r, pred)
		if err != nil {
			return err
		}
		out[i] = math.Float64frombits(b)
		prev = b
	}
	return nil
}

// ratioPredict guesses a calibrated value from the previous one, assuming
// value ∝ raw locally (exact for unit scaling, close for smooth calibrations).
// It uses only correctly rounded IEEE operations, so every platform agrees.
func ratioPredict(prevVal, prevRaw, raw float64) uint64 {
	if prevRaw == 0 || math.IsNaN(prevVal) || math.IsInf(prevVal, 0) {
		return math.Float64bits(prevVal)
	}
	p := prevVal * (raw / prevRaw)
	if math.IsNaN(p) || math.IsInf(p, 0) {
		return math.Float64bits(prevVal)
	}
	return math.Float64bits(p)
}
