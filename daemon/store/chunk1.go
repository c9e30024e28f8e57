package store

import (
	"encoding/binary"
	"fmt"
	"hash/crc32"
	"math"
	"time"
)

// Chunk format, version 1 (all integers little-endian unless noted):
//
//	byte 0      version (1)
//	bytes 1-4   CRC-32C (Castagnoli) of every byte after these four
//	uvarint     n, the number of points (≥ 1)
//	varint      time of the first point, ns since the Unix epoch (equals the key)
//	uvarint     time of the last point minus the first, ns
//	bit stream  time column, quality runs, calibration runs, raw column, value column
//
// The time column is either delta-of-delta (a fixed schedule costs ~1 bit per
// point) or the deltas' residuals from the chunk's median period (better for
// a jittered schedule: the residual's variance is 2σ² against 6σ² for
// delta-of-delta), each coded in exponential-Golomb with a per-chunk order;
// the encoder keeps the smaller. Integer arithmetic wraps, so any int64
// times round-trip.

// Time column modes.
const (
	timeDoD    = 0
	timePeriod = 1
)

// encodeChunk1 encodes points sorted by time (at least one) in version 1.
// Only tests use it now, to make version-1 chunks for the migration.
func encodeChunk1(pts []Point) []byte {
	n := len(pts)
	ns := make([]int64, n)
	for i, p := range pts {
		ns[i] = p.At.UnixNano()
	}
	out := make([]byte, headerFixed, 64+n*4)
	out[0] = 1
	out = binary.AppendUvarint(out, uint64(n))
	out = binary.AppendVarint(out, ns[0])
	out = binary.AppendUvarint(out, uint64(ns[n-1]-ns[0]))

	var w bitWriter
	encodeTimes(&w, ns)
	qs, cals := make([]uint32, n), make([]uint32, n)
	raws, vals := make([]float64, n), make([]float64, n)
	for i, p := range pts {
		qs[i], cals[i], raws[i], vals[i] = uint32(p.Quality), p.Calibration, p.Raw, p.Value
	}
	encodeRuns(&w, qs)
	encodeRuns(&w, cals)
	encodeFloats(&w, raws, nil)
	encodeValues(&w, vals, raws, cals)
	out = append(out, w.bytes()...)
	binary.LittleEndian.PutUint32(out[1:5], crc32.Checksum(out[headerFixed:], castagnoli))
	return out
}

// decodeChunk1 decodes a whole version-1 chunk whose header h has been read.
func decodeChunk1(h chunkHead) ([]Point, error) {
	r := &bitReader{buf: h.body}
	ns := make([]int64, h.n)
	if err := decodeTimes(r, ns, h.first); err != nil {
		return nil, fmt.Errorf("time column: %w", err)
	}
	if ns[h.n-1] != h.last {
		return nil, errCorruptField("time column (last time disagrees with the header)")
	}
	qs, cals := make([]uint32, h.n), make([]uint32, h.n)
	raws, vals := make([]float64, h.n), make([]float64, h.n)
	if err := decodeRuns(r, qs); err != nil {
		return nil, fmt.Errorf("quality column: %w", err)
	}
	if err := decodeRuns(r, cals); err != nil {
		return nil, fmt.Errorf("calibration column: %w", err)
	}
	if err := decodeFloats(r, raws, nil); err != nil {
		return nil, fmt.Errorf("raw column: %w", err)
	}
	if err := decodeValues(r, vals, raws, cals); err != nil {
		return nil, fmt.Errorf("value column: %w", err)
	}
	if r.remaining() >= 8 {
		return nil, errCorruptField("chunk (bytes after the last column)")
	}
	pts := make([]Point, h.n)
	for i := range pts {
		if qs[i] > math.MaxUint8 {
			return nil, errCorruptField("quality column")
		}
		pts[i] = Point{At: time.Unix(0, ns[i]).UTC(), Raw: raws[i], Value: vals[i],
			Quality: uint8(qs[i]), Calibration: cals[i]}
	}
	return pts, nil
}
