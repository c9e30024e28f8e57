package store

import (
	"encoding/binary"
	"errors"
	"fmt"
	"hash/crc32"
	"math"
	"time"
)

// A stored roll-up record, under its interval's start as key (chunkKey):
//
//	version (1 byte, 1) | CRC-32C of the rest (4 bytes, little-endian) |
//	flags (1 byte) | count, valid, not-ok (uvarints) |
//	sum (8 bytes, when valid > 1) | correction (8 bytes, when flagged) |
//	distinct points (uvarint n, then each point) |
//	slot indexes (1 byte each: first, min, max, last when valid > 0;
//	first mark, last mark when count > valid)
//
// A point is its offset from the interval's start (uvarint, in ms when
// flagged, else in ns), a byte (bit 0: Value has Raw's bits; bit 1: a
// quality byte follows), Raw and Value (8 bytes each, Value left out when
// bit 0 is set), the quality and the calibration (uvarint). The record is
// small (a few points) and rewritten as a whole when a flush adds to its
// interval. Roll-ups are derived data: while the raw points are kept they
// can be rebuilt from them (Open does so for files of schema 1 and 2).
const rollupVersion = 1

const (
	rollupHasComp = 1 << iota // the compensation term is not zero
	rollupMillis              // point offsets are whole milliseconds, stored in ms
)

// slots returns the points a record keeps, in slot order.
func (r *Rollup) slots() []*Point { return r.slotsTo(nil) }

// slotsTo is slots appending to s.
func (r *Rollup) slotsTo(s []*Point) []*Point {
	if r.Valid > 0 {
		s = append(s, &r.First, &r.MinPoint, &r.MaxPoint, &r.Last)
	}
	if r.Marks() > 0 {
		s = append(s, &r.FirstMark, &r.LastMark)
	}
	return s
}

// encodeRollup encodes r (Start is the key, so it is not stored; End is
// Start plus the tier's width).
func encodeRollup(r Rollup) []byte {
	slots := r.slots()
	var pts []Point
	idx := make([]byte, len(slots))
	for i, p := range slots {
		j := 0
		for j < len(pts) && !sameBits(pts[j], *p) {
			j++
		}
		if j == len(pts) {
			pts = append(pts, *p)
		}
		idx[i] = byte(j)
	}
	start := r.Start.UnixNano()
	var flags byte
	if r.comp != 0 {
		flags |= rollupHasComp
	}
	ms := true
	for _, p := range pts {
		ms = ms && (p.At.UnixNano()-start)%1e6 == 0
	}
	if ms {
		flags |= rollupMillis
	}
	b := make([]byte, 5, 48+len(pts)*24)
	b[0] = rollupVersion
	b = append(b, flags)
	b = binary.AppendUvarint(b, uint64(r.Count))
	b = binary.AppendUvarint(b, uint64(r.Valid))
	b = binary.AppendUvarint(b, uint64(r.NotOK))
	if r.Valid > 1 {
		b = binary.LittleEndian.AppendUint64(b, math.Float64bits(r.sum))
	}
	if r.comp != 0 {
		b = binary.LittleEndian.AppendUint64(b, math.Float64bits(r.comp))
	}
	b = binary.AppendUvarint(b, uint64(len(pts)))
	for _, p := range pts {
		off := uint64(p.At.UnixNano() - start)
		if ms {
			off /= 1e6
		}
		b = binary.AppendUvarint(b, off)
		raw, val := math.Float64bits(p.Raw), math.Float64bits(p.Value)
		var h byte
		if raw == val {
			h |= 1
		}
		if p.Quality != 0 {
			h |= 2
		}
		b = append(b, h)
		b = binary.LittleEndian.AppendUint64(b, raw)
		if raw != val {
			b = binary.LittleEndian.AppendUint64(b, val)
		}
		if p.Quality != 0 {
			b = append(b, p.Quality)
		}
		b = binary.AppendUvarint(b, uint64(p.Calibration))
	}
	b = append(b, idx...)
	binary.LittleEndian.PutUint32(b[1:5], crc32.Checksum(b[5:], castagnoli))
	return b
}

// errRollup reports a record that cannot be read.
func errRollup(what string) error { return fmt.Errorf("roll-up record: corrupt %s", what) }

// decodeRollup decodes a record of the interval [start, start+width).
func decodeRollup(b []byte, start time.Time, width time.Duration) (Rollup, error) {
	r := newRollup(start, width)
	if len(b) < 6 {
		return r, errors.New("roll-up record too short")
	}
	if b[0] != rollupVersion {
		return r, fmt.Errorf("roll-up record version %d is not one this holdfast reads (it reads %d); use a newer holdfast", b[0], rollupVersion)
	}
	if got, want := crc32.Checksum(b[5:], castagnoli), binary.LittleEndian.Uint32(b[1:5]); got != want {
		return r, fmt.Errorf("roll-up record checksum mismatch (stored %08x, computed %08x): the record is damaged", want, got)
	}
	d := rdr{b: b[6:]}
	flags := b[5]
	r.Count, r.Valid, r.NotOK = int(d.uvarint()), int(d.uvarint()), int(d.uvarint())
	if r.Valid > r.Count || r.NotOK > r.Count-r.Valid || r.Count == 0 {
		return r, errRollup("counts")
	}
	if r.Valid > 1 {
		r.sum = math.Float64frombits(d.u64())
	}
	if flags&rollupHasComp != 0 {
		r.comp = math.Float64frombits(d.u64())
	}
	n := d.uvarint()
	if n > 6 {
		return r, errRollup("point count")
	}
	var buf [6]Point
	pts := buf[:n]
	s0 := start.UnixNano()
	for i := range pts {
		off := d.uvarint()
		if flags&rollupMillis != 0 {
			off *= 1e6
		}
		if off >= uint64(width) {
			return r, errRollup("point time")
		}
		h := d.byte()
		raw := d.u64()
		val := raw
		if h&1 == 0 {
			val = d.u64()
		}
		var q uint8
		if h&2 != 0 {
			q = d.byte()
		}
		cal := d.uvarint()
		pts[i] = Point{At: time.Unix(0, s0+int64(off)).UTC(), Raw: math.Float64frombits(raw),
			Value: math.Float64frombits(val), Quality: q, Calibration: uint32(cal)}
	}
	var ps [6]*Point
	for _, p := range r.slotsTo(ps[:0]) {
		j := int(d.byte())
		if j >= len(pts) {
			return r, errRollup("slot")
		}
		*p = pts[j]
	}
	if d.err || len(d.b) != 0 {
		return r, errRollup("length")
	}
	if r.Valid > 0 {
		r.Min, r.Max = r.MinPoint.Value, r.MaxPoint.Value
		if r.Valid == 1 {
			r.sum = r.First.Value
		}
	}
	return r, nil
}

// rdr reads a record's fields, remembering whether it ran out.
type rdr struct {
	b   []byte
	err bool
}

func (d *rdr) uvarint() uint64 {
	v, n := binary.Uvarint(d.b)
	if n <= 0 {
		d.err, d.b = true, nil
		return 0
	}
	d.b = d.b[n:]
	return v
}

func (d *rdr) u64() uint64 {
	if len(d.b) < 8 {
		d.err, d.b = true, nil
		return 0
	}
	v := binary.LittleEndian.Uint64(d.b)
	d.b = d.b[8:]
	return v
}

func (d *rdr) byte() byte {
	if len(d.b) < 1 {
		d.err = true
		return 0
	}
	v := d.b[0]
	d.b = d.b[1:]
	return v
}
