package store

import (
	"encoding/binary"
	"errors"
	"time"
)

// The general-purpose baseline the benchmarks compare against: a chunk of
// timestamps in milliseconds coded as delta-of-delta in the tiered buckets
// of Pelkonen et al., "Gorilla: A Fast, Scalable, In-Memory Time Series
// Database", VLDB 2015, §4.1.1 (with the 14/17/20/64-bit tiers a
// millisecond clock needs, as common practice in Prometheus-style stores),
// raw and value in Gorilla XOR (§4.1.2, xor.go), quality and calibration as
// runs. It lives in tests only.

// xorTier is one delta-of-delta bucket: its prefix, prefix length and width.
var xorTiers = []struct {
	prefix, plen uint64
	width        uint
}{{0b10, 2, 14}, {0b110, 3, 17}, {0b1110, 4, 20}}

// encodeXORChunk encodes time-sorted points (times taken in whole ms).
func encodeXORChunk(pts []Point) []byte {
	out := binary.AppendUvarint(nil, uint64(len(pts)))
	var w bitWriter
	var prev, delta int64
	for i, p := range pts {
		ms := p.At.UnixMilli()
		switch i {
		case 0:
			w.write(uint64(ms), 64)
		case 1:
			delta = ms - prev
			w.expGolomb(zigzag(delta), 0)
		default:
			d := ms - prev
			writeDoD(&w, d-delta)
			delta = d
		}
		prev = ms
	}
	qs, cals := make([]uint32, len(pts)), make([]uint32, len(pts))
	raws, vals := make([]float64, len(pts)), make([]float64, len(pts))
	for i, p := range pts {
		qs[i], cals[i], raws[i], vals[i] = uint32(p.Quality), p.Calibration, p.Raw, p.Value
	}
	encodeRuns(&w, qs)
	encodeRuns(&w, cals)
	encodeXOR(&w, raws, nil)
	encodeXOR(&w, vals, nil)
	return append(out, w.bytes()...)
}

// writeDoD writes one delta-of-delta in its bucket.
func writeDoD(w *bitWriter, dod int64) {
	if dod == 0 {
		w.bit(false)
		return
	}
	for _, t := range xorTiers {
		if dod >= -(1<<(t.width-1))+1 && dod <= 1<<(t.width-1) {
			w.write(t.prefix, uint(t.plen))
			w.write(uint64(dod), t.width)
			return
		}
	}
	w.write(0b1111, 4)
	w.write(uint64(dod), 64)
}

// readDoD reads one delta-of-delta.
func readDoD(r *bitReader) (int64, error) {
	for i := range 4 {
		b, err := r.bit()
		if err != nil {
			return 0, err
		}
		if !b {
			if i == 0 {
				return 0, nil
			}
			width := xorTiers[i-1].width
			v, err := r.read(width)
			if err != nil {
				return 0, err
			}
			if v > 1<<(width-1) { // sign-extend
				return int64(v) - 1<<width, nil
			}
			return int64(v), nil
		}
	}
	v, err := r.read(64)
	return int64(v), err
}

// decodeXORChunk decodes what encodeXORChunk wrote.
func decodeXORChunk(b []byte) ([]Point, error) {
	n, k := binary.Uvarint(b)
	if k <= 0 || n == 0 {
		return nil, errors.New("bad count")
	}
	r := &bitReader{buf: b[k:]}
	ms := make([]int64, n)
	first, err := r.read(64)
	if err != nil {
		return nil, err
	}
	ms[0] = int64(first)
	var delta int64
	for i := 1; i < int(n); i++ {
		if i == 1 {
			d, err := r.expGolomb(0)
			if err != nil {
				return nil, err
			}
			delta = unzigzag(d)
		} else {
			dod, err := readDoD(r)
			if err != nil {
				return nil, err
			}
			delta += dod
		}
		ms[i] = ms[i-1] + delta
	}
	qs, cals := make([]uint32, n), make([]uint32, n)
	raws, vals := make([]float64, n), make([]float64, n)
	if err := decodeRuns(r, qs); err != nil {
		return nil, err
	}
	if err := decodeRuns(r, cals); err != nil {
		return nil, err
	}
	if err := decodeXOR(r, raws, nil); err != nil {
		return nil, err
	}
	if err := decodeXOR(r, vals, nil); err != nil {
		return nil, err
	}
	pts := make([]Point, n)
	for i := range pts {
		pts[i] = Point{At: time.UnixMilli(ms[i]).UTC(), Raw: raws[i], Value: vals[i], Quality: uint8(qs[i]), Calibration: cals[i]}
	}
	return pts, nil
}
