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

// Chunk formats: version 2 (chunk2.go) is written; version 1 (chunk1.go)
// is still read, and Open rewrites it as version 2 (migrate.go).
const (
	chunkVersion = 2
	headerFixed  = 5
)

// castagnoli is the CRC table for chunk checksums.
var castagnoli = crc32.MakeTable(crc32.Castagnoli)

// encodeChunk encodes points sorted by time (at least one) in the current format.
func encodeChunk(pts []Point) []byte { return encodeChunk2(pts) }

// A chunkHead is what a chunk's header says without decoding its columns.
type chunkHead struct {
	version     byte
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
	if b[0] != 1 && b[0] != 2 {
		return h, fmt.Errorf("chunk format version %d is not one this holdfast reads (it reads 1 and 2); use a newer holdfast", b[0])
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
	// Version 1: every point takes at least one bit of the time column,
	// except the first two. Version 2 can code a regular, constant run in
	// a few bits, so it has a fixed bound (and the decoder checks more).
	if n == 0 || (b[0] == 1 && n > uint64(len(h.body))*8+2) || n > maxChunkPoints2 {
		return h, errCorruptField("point count")
	}
	h.version, h.n, h.first, h.last = b[0], int(n), first, first+int64(span)
	return h, nil
}

// decodeChunk decodes a whole chunk of either version.
func decodeChunk(b []byte) ([]Point, error) {
	return appendChunk(nil, b)
}

// appendChunk decodes a chunk of either version and appends its points to dst.
func appendChunk(dst []Point, b []byte) ([]Point, error) {
	h, err := readHead(b)
	if err != nil {
		return dst, err
	}
	if h.version == 1 {
		pts, err := decodeChunk1(h)
		return append(dst, pts...), err
	}
	return decodeChunk2(dst, h)
}

// sameBits reports whether two points are identical to the bit.
func sameBits(a, b Point) bool {
	return a.At.Equal(b.At) && math.Float64bits(a.Raw) == math.Float64bits(b.Raw) &&
		math.Float64bits(a.Value) == math.Float64bits(b.Value) &&
		a.Quality == b.Quality && a.Calibration == b.Calibration
}
