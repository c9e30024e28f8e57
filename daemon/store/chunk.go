package store

import (
	"encoding/binary"
	"errors"
	"fmt"
	"hash/crc32"
	"math"
	"time"
)

// A Point is one stored sample of one series.
type Point struct {
	At          time.Time
	Raw         float64 // the reading as the instrument gave it
	Value       float64 // the calibrated value (SI); valid only when Quality is 0
	Quality     uint8   // 0 = ok; others mean Value is not valid (see calib.Quality)
	Calibration uint32  // id of the calibration that produced Value; 0 = the gauge's built-in transfer
}

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
const (
	chunkVersion = 1
	headerFixed  = 5
)

// castagnoli is the CRC table for chunk checksums.
var castagnoli = crc32.MakeTable(crc32.Castagnoli)

// Time column modes.
const (
	timeDoD    = 0
	timePeriod = 1
)

// encodeChunk encodes points sorted by time (at least one).
func encodeChunk(pts []Point) []byte {
	n := len(pts)
	ns := make([]int64, n)
	for i, p := range pts {
		ns[i] = p.At.UnixNano()
	}
	out := make([]byte, headerFixed, 64+n*4)
	out[0] = chunkVersion
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

// A chunkHead is what a chunk's header says without decoding its columns.
type chunkHead struct {
	n           int
	first, last int64 // ns
	body        []byte
}

// readHead checks a chunk's version and checksum and parses its header.
func readHead(b []byte) (chunkHead, error) {
	var h chunkHead
	if len(b) < headerFixed+3 {
		return h, errors.New("chunk too short")
	}
	if b[0] != chunkVersion {
		return h, fmt.Errorf("chunk format version %d is not one this holdfast reads (it reads %d); use a newer holdfast", b[0], chunkVersion)
	}
	if got, want := crc32.Checksum(b[headerFixed:], castagnoli), binary.LittleEndian.Uint32(b[1:5]); got != want {
		return h, fmt.Errorf("checksum mismatch (stored %08x, computed %08x): the chunk is damaged", want, got)
	}
	rest := b[headerFixed:]
	n, k1 := binary.Uvarint(rest)
	if k1 <= 0 {
		return h, errCorruptField("point count")
	}
	first, k2 := binary.Varint(rest[k1:])
	if k2 <= 0 {
		return h, errCorruptField("first time")
	}
	span, k3 := binary.Uvarint(rest[k1+k2:])
	if k3 <= 0 {
		return h, errCorruptField("time span")
	}
	h.body = rest[k1+k2+k3:]
	// Every point takes at least one bit of the time column, except the first two.
	if n == 0 || n > uint64(len(h.body))*8+2 {
		return h, errCorruptField("point count")
	}
	h.n, h.first, h.last = int(n), first, first+int64(span)
	return h, nil
}

// decodeChunk decodes a whole chunk.
func decodeChunk(b []byte) ([]Point, error) {
	h, err := readHead(b)
	if err != nil {
		return nil, err
	}
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

// sameBits reports whether two points are identical to the bit.
func sameBits(a, b Point) bool {
	return a.At.Equal(b.At) && math.Float64bits(a.Raw) == math.Float64bits(b.Raw) &&
		math.Float64bits(a.Value) == math.Float64bits(b.Value) &&
		a.Quality == b.Quality && a.Calibration == b.Calibration
}
