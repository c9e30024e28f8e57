package store

import (
	"encoding/binary"
	"fmt"
	"hash/crc32"
	"math"
	"slices"
	"sync"
	"time"
)

// Chunk format, version 2. The header is version 1's (readHead reads both):
//
//	byte 0      version (2)
//	bytes 1-4   CRC-32C (Castagnoli) of every byte after these four
//	uvarint     n, the number of points (≥ 1)
//	varint      time of the first point, ns since the Unix epoch (equals the key)
//	uvarint     time of the last point minus the first, ns
//	bit stream  time column (times2.go), quality runs, calibration runs,
//	            raw column (alp.go), value column (derive.go)
//
// Every column is chosen by counting, never by trying every code on every
// block: one pass over the values, plus a second codec only when the first
// fits badly.

// maxChunkPoints2 bounds a version-2 chunk's point count, so a damaged
// count cannot make the decoder allocate without limit. Chunks exceed
// chunkMaxPoints only when many points share their first time.
const maxChunkPoints2 = 1 << 24

// encoder holds the buffers one chunk encoding reuses.
type encoder struct {
	ns         []int64
	zz         []uint64
	raws, vals []float64
	qs, cals   []uint32
	vs         valueScratch
	rc         residualCoder
	w          bitWriter
}

var encoders = sync.Pool{New: func() any { return new(encoder) }}

// encodeChunk2 encodes points sorted by time (at least one).
func encodeChunk2(pts []Point) []byte {
	e := encoders.Get().(*encoder)
	defer encoders.Put(e)
	n := len(pts)
	e.ns, e.raws, e.vals = grow(e.ns, n), grow(e.raws, n), grow(e.vals, n)
	e.qs, e.cals = grow(e.qs, n), grow(e.cals, n)
	for i, p := range pts {
		e.ns[i], e.raws[i], e.vals[i] = p.At.UnixNano(), p.Raw, p.Value
		e.qs[i], e.cals[i] = uint32(p.Quality), p.Calibration
	}
	w := &e.w
	w.reset()
	e.zz = encodeTimes2(w, e.ns, e.zz, &e.rc)
	writeRuns(w, e.qs)
	writeRuns(w, e.cals)
	encodeFloats2(w, e.raws, &e.vs.floatScratch)
	encodeValues2(w, e.vals, e.raws, e.cals, &e.vs)

	out := make([]byte, headerFixed, headerFixed+3*binary.MaxVarintLen64+w.bits()/8+1)
	out[0] = chunkVersion
	out = binary.AppendUvarint(out, uint64(n))
	out = binary.AppendVarint(out, e.ns[0])
	out = binary.AppendUvarint(out, uint64(e.ns[n-1]-e.ns[0]))
	out = w.appendTo(out)
	binary.LittleEndian.PutUint32(out[1:5], crc32.Checksum(out[headerFixed:], castagnoli))
	return out
}

// writeRuns writes a column of small integers as encodeRuns does, without
// building the list of runs.
func writeRuns(w *bitWriter, vals []uint32) {
	runs := 1
	for i := 1; i < len(vals); i++ {
		if vals[i] != vals[i-1] {
			runs++
		}
	}
	w.expGolomb(uint64(runs), 0)
	start := 0
	for i := 1; i <= len(vals); i++ {
		if i == len(vals) || vals[i] != vals[start] {
			w.expGolomb(uint64(vals[start]), 0)
			w.expGolomb(uint64(i-start-1), 0)
			start = i
		}
	}
}

// decoder holds the buffers one chunk decoding reuses.
type decoder struct {
	ns         []int64
	raws, vals []float64
	qs, cals   []uint32
	zz         []uint64
	rc         residualCoder
	vd         valueDecoder
}

var decoders = sync.Pool{New: func() any { return new(decoder) }}

// decodeChunk2 appends the points of a version-2 chunk whose header h
// has been read to dst.
func decodeChunk2(dst []Point, h chunkHead) ([]Point, error) {
	d := decoders.Get().(*decoder)
	defer decoders.Put(d)
	r := &bitReader{buf: h.body}
	if err := checkTimeCount(*r, h); err != nil {
		return dst, fmt.Errorf("time column: %w", err)
	}
	n := h.n
	d.ns, d.raws, d.vals = grow(d.ns, n), grow(d.raws, n), grow(d.vals, n)
	d.qs, d.cals = grow(d.qs, n), grow(d.cals, n)
	var err error
	if d.zz, err = decodeTimes2(r, d.ns, h.first, h.last, d.zz, &d.rc); err != nil {
		return dst, fmt.Errorf("time column: %w", err)
	}
	if err := decodeRuns(r, d.qs); err != nil {
		return dst, fmt.Errorf("quality column: %w", err)
	}
	if err := decodeRuns(r, d.cals); err != nil {
		return dst, fmt.Errorf("calibration column: %w", err)
	}
	if d.vd.ints, err = decodeFloats2(r, d.raws, d.vd.ints, &d.vd.is); err != nil {
		return dst, fmt.Errorf("raw column: %w", err)
	}
	if err := decodeValues2(r, d.vals, d.raws, d.cals, &d.vd); err != nil {
		return dst, fmt.Errorf("value column: %w", err)
	}
	if r.remaining() >= 8 {
		return dst, errCorruptField("chunk (bytes after the last column)")
	}
	for i := range n {
		if d.qs[i] > math.MaxUint8 {
			return dst, errCorruptField("quality column")
		}
	}
	dst = slices.Grow(dst, n)
	for i := range n {
		dst = append(dst, Point{At: time.Unix(0, d.ns[i]).UTC(), Raw: d.raws[i], Value: d.vals[i],
			Quality: uint8(d.qs[i]), Calibration: d.cals[i]})
	}
	return dst, nil
}

// checkTimeCount checks, before anything is allocated, that the time
// column can hold h.n points: an irregular column spends at least one bit
// per point, a regular one must end exactly at the last time.
func checkTimeCount(r bitReader, h chunkHead) error {
	if h.n < 2 {
		return nil
	}
	g, period, regular, err := timeHeader(&r, h.first, h.last)
	if err != nil {
		return err
	}
	if !regular {
		if r.remaining() < h.n-1 {
			return errShort
		}
		return nil
	}
	var u uint64
	var a anchor
	for range h.n - 1 {
		u = a.predict(period)
		a.follow(period, 0, u)
	}
	if u != uint64(h.last-h.first)/g {
		return errCorruptField("time column (regular times disagree with the header)")
	}
	return nil
}
