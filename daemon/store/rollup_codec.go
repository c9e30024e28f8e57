package store

import (
	"encoding/binary"
	"errors"
	"fmt"
	"hash/crc32"
	"math"
	"slices"
	"time"
)

// Roll-ups are stored in groups: the minute roll-ups of one hour, the hour
// roll-ups of one day (UTC), each group one bbolt value under its start
// (chunkKey). A group is
//
//	version (1 byte, 2) | CRC-32C of the rest (4 bytes, little-endian) |
//	member count (uvarint) | members | chunk
//
// and a member (one roll-up) is its place in the group (uvarint: minutes
// since the hour, hours since midnight), count, valid and not-ok counts
// (uvarints), a flags byte (bit 0: a compensation term follows), the sum
// (8 bytes, when valid > 1), the compensation term (8 bytes, when flagged),
// and its slots as indexes into the chunk's points (uvarints: first, min,
// max, last when valid > 0; first mark, last mark when count > valid). The
// chunk (chunk.go, the current version) holds the distinct points the
// members keep, in time order; so the points cost what chunk points cost
// (an hour of minute roll-ups of a 10 Hz gauge, some 240 points, takes
// about 30 bytes a minute) instead of 17 bytes or more each. A flush
// rewrites the group of its minutes and of its hour. Roll-ups are derived
// data: while the raw points are kept they can be rebuilt from them (Open
// does so for files of schema 1 and 2).
const rollupVersion = 2

// groupWidth is the span of one stored group of tier t's roll-ups.
func groupWidth(t Tier) time.Duration {
	if t == TierHour {
		return 24 * time.Hour
	}
	return time.Hour
}

// slots returns the points a roll-up keeps, in slot order.
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

// encodeGroup encodes roll-ups of width, sorted by Start, all in the group
// starting at start (at least one).
func encodeGroup(start time.Time, width time.Duration, rs []Rollup) []byte {
	b := make([]byte, 5, 64+len(rs)*24)
	b[0] = rollupVersion
	b = binary.AppendUvarint(b, uint64(len(rs)))
	var pts []Point
	for _, r := range rs {
		d := distinct(r)
		base := len(pts)
		pts = append(pts, d...)
		b = binary.AppendUvarint(b, uint64(r.Start.Sub(start)/width))
		b = binary.AppendUvarint(b, uint64(r.Count))
		b = binary.AppendUvarint(b, uint64(r.Valid))
		b = binary.AppendUvarint(b, uint64(r.NotOK))
		var flags byte
		if r.comp != 0 {
			flags |= 1
		}
		b = append(b, flags)
		if r.Valid > 1 {
			b = binary.LittleEndian.AppendUint64(b, math.Float64bits(r.sum))
		}
		if r.comp != 0 {
			b = binary.LittleEndian.AppendUint64(b, math.Float64bits(r.comp))
		}
		for _, p := range r.slots() {
			i := slices.IndexFunc(d, func(q Point) bool { return sameBits(q, *p) })
			b = binary.AppendUvarint(b, uint64(base+i))
		}
	}
	b = append(b, encodeChunk(pts)...)
	binary.LittleEndian.PutUint32(b[1:5], crc32.Checksum(b[5:], castagnoli))
	return b
}

// errRollup reports a group that cannot be read.
func errRollup(what string) error { return fmt.Errorf("roll-up group: corrupt %s", what) }

// decodeGroup decodes a group starting at start of roll-ups of width.
func decodeGroup(b []byte, start time.Time, width, group time.Duration) ([]Rollup, error) {
	if len(b) < 6 {
		return nil, errors.New("roll-up group too short")
	}
	if b[0] != rollupVersion {
		return nil, fmt.Errorf("roll-up group version %d is not one this holdfast reads (it reads %d); use a newer holdfast", b[0], rollupVersion)
	}
	if got, want := crc32.Checksum(b[5:], castagnoli), binary.LittleEndian.Uint32(b[1:5]); got != want {
		return nil, fmt.Errorf("roll-up group checksum mismatch (stored %08x, computed %08x): the group is damaged", want, got)
	}
	d := rdr{b: b[5:]}
	n := d.uvarint()
	if n == 0 || n > uint64(group/width) {
		return nil, errRollup("member count")
	}
	rs := make([]Rollup, n)
	idx := make([][6]uint64, n)
	prev := int64(-1)
	for i := range rs {
		off := int64(d.uvarint())
		if off <= prev || off >= int64(group/width) {
			return nil, errRollup("member place")
		}
		prev = off
		r := newRollup(start.Add(time.Duration(off)*width), width)
		r.Count, r.Valid, r.NotOK = int(d.uvarint()), int(d.uvarint()), int(d.uvarint())
		if r.Count == 0 || r.Valid > r.Count || r.NotOK > r.Count-r.Valid {
			return nil, errRollup("counts")
		}
		flags := d.byte()
		if r.Valid > 1 {
			r.sum = math.Float64frombits(d.u64())
		}
		if flags&1 != 0 {
			r.comp = math.Float64frombits(d.u64())
		}
		for j := range r.slots() {
			idx[i][j] = d.uvarint()
		}
		rs[i] = r
	}
	if d.err {
		return nil, errRollup("length")
	}
	pts, err := decodeChunk(d.b)
	if err != nil {
		return nil, fmt.Errorf("roll-up group points: %w", err)
	}
	for i := range rs {
		r := &rs[i]
		for j, p := range r.slots() {
			k := idx[i][j]
			if k >= uint64(len(pts)) || !pts[k].At.Before(r.End) || pts[k].At.Before(r.Start) {
				return nil, errRollup("slot")
			}
			*p = pts[k]
		}
		if r.Valid > 0 {
			r.Min, r.Max = r.MinPoint.Value, r.MaxPoint.Value
			if r.Valid == 1 {
				r.sum = r.First.Value
			}
		}
	}
	return rs, nil
}

// rdr reads a group's fields, remembering whether it ran out.
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

// The open roll-up (rollupstore.go, keyOpen) is rewritten on every flush,
// so it is coded plainly, for speed rather than size (one per series and
// tier): version (1 byte, 3) | CRC-32C (4 bytes) | start (8 bytes, ns) |
// count, valid, not-ok (uvarints) | sum, compensation (8 bytes each) |
// slot count (1 byte) | per slot: time offset from start (uvarint, ns),
// Raw, Value (8 bytes each), quality (1 byte), calibration (uvarint).
const openVersion = 3

// encodeOpen encodes one roll-up plainly.
func encodeOpen(r Rollup) []byte {
	b := make([]byte, 5, 64+6*30)
	b[0] = openVersion
	start := r.Start.UnixNano()
	b = binary.BigEndian.AppendUint64(b, uint64(start))
	b = binary.AppendUvarint(b, uint64(r.Count))
	b = binary.AppendUvarint(b, uint64(r.Valid))
	b = binary.AppendUvarint(b, uint64(r.NotOK))
	b = binary.LittleEndian.AppendUint64(b, math.Float64bits(r.sum))
	b = binary.LittleEndian.AppendUint64(b, math.Float64bits(r.comp))
	var ps [6]*Point
	slots := r.slotsTo(ps[:0])
	b = append(b, byte(len(slots)))
	for _, p := range slots {
		b = binary.AppendUvarint(b, uint64(p.At.UnixNano()-start))
		b = binary.LittleEndian.AppendUint64(b, math.Float64bits(p.Raw))
		b = binary.LittleEndian.AppendUint64(b, math.Float64bits(p.Value))
		b = append(b, p.Quality)
		b = binary.AppendUvarint(b, uint64(p.Calibration))
	}
	binary.LittleEndian.PutUint32(b[1:5], crc32.Checksum(b[5:], castagnoli))
	return b
}

// decodeOpen decodes an open roll-up of width.
func decodeOpen(b []byte, width time.Duration) (Rollup, error) {
	if len(b) < 13 || b[0] != openVersion {
		return Rollup{}, errors.New("open roll-up: not a record this holdfast reads")
	}
	if crc32.Checksum(b[5:], castagnoli) != binary.LittleEndian.Uint32(b[1:5]) {
		return Rollup{}, errors.New("open roll-up: checksum mismatch: the record is damaged")
	}
	start := int64(binary.BigEndian.Uint64(b[5:]))
	r := newRollup(time.Unix(0, start).UTC(), width)
	d := rdr{b: b[13:]}
	r.Count, r.Valid, r.NotOK = int(d.uvarint()), int(d.uvarint()), int(d.uvarint())
	if r.Count == 0 || r.Valid > r.Count || r.NotOK > r.Count-r.Valid {
		return r, errRollup("counts")
	}
	r.sum, r.comp = math.Float64frombits(d.u64()), math.Float64frombits(d.u64())
	var ps [6]*Point
	slots := r.slotsTo(ps[:0])
	if int(d.byte()) != len(slots) {
		return r, errRollup("slot count")
	}
	for _, p := range slots {
		off := d.uvarint()
		if off >= uint64(width) {
			return r, errRollup("slot time")
		}
		*p = Point{At: time.Unix(0, start+int64(off)).UTC(), Raw: math.Float64frombits(d.u64()),
			Value: math.Float64frombits(d.u64()), Quality: d.byte(), Calibration: uint32(d.uvarint())}
	}
	if d.err || len(d.b) != 0 {
		return r, errRollup("length")
	}
	if r.Valid > 0 {
		r.Min, r.Max = r.MinPoint.Value, r.MaxPoint.Value
	}
	return r, nil
}
