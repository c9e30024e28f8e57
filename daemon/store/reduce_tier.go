package store

import (
	"errors"
	"slices"
	"time"

	bolt "go.etcd.io/bbolt"
)

// A Reduction is a reduced query's answer and what it was built from.
type Reduction struct {
	Points   []Point       // stored points, bit for bit, in time order
	Tier     Tier          // raw: chosen among the points; minute or hour: among the roll-ups' points
	GapLimit time.Duration // consecutive Points further apart have no stored point between them (see GapLimit)
	Count    int           // stored points in the span read
	NotOK    int           // of them, points whose quality is not 0
}

// ReduceTiered is Reduce, choosing what to read by the width of its fine
// buckets, (to−from)/(2·Buckets(points)): the raw points below a minute,
// the minute roll-ups from a minute, the hour roll-ups from an hour. It
// also reads roll-ups, whatever the width, where from is older than the
// raw points (or minute roll-ups) retention kept (Horizons). The result is
// what Reduce would choose from the raw points if each point were placed
// in the bucket of the start of its roll-up's interval (clamped to from):
// every bucket keeps its first, minimum, maximum and last valid point and
// its first and last other point, and these are exactly the slots a
// roll-up keeps, so nothing is approximated; only the bucket edges move to
// whole minutes or hours, which GapLimit allows for. The parts of the span
// too short for a whole interval are read from the next tier down (partial
// minutes from the raw points); where that tier is gone too, the span is
// cut inward to whole intervals. Roll-ups count invalid points (NaN, ±Inf
// with quality 0) as markers, as Reduce does.
func (db *DB) ReduceTiered(series string, from, to time.Time, points int) (Reduction, error) {
	if err := checkReduce(from, to, points); err != nil {
		return Reduction{}, err
	}
	lo, hi := clampNano(from), clampNano(to)
	tier := TierRaw
	var hz [3]int64
	if db.rollups {
		var err error
		if hz, err = db.horizonsNano(series); err != nil {
			return Reduction{}, err
		}
		fine := (uint64(hi) - uint64(lo)) / (2 * uint64(Buckets(points)))
		switch {
		case fine >= uint64(time.Hour) || lo < hz[TierMinute]:
			tier = TierHour
		case fine >= uint64(time.Minute) || lo < hz[TierRaw]:
			tier = TierMinute
		}
	}
	if tier == TierRaw {
		return db.reduceRaw(series, from, to, points)
	}
	cover, buf, bad, err := db.cover(series, tier, lo, hi, hz)
	if err != nil {
		return Reduction{}, err
	}
	cover = addBuffered(cover, buf)
	r := newReducer(lo, hi, points)
	for _, c := range cover {
		r.addRollup(c, lo)
	}
	if r.n <= points {
		if lo >= hz[TierRaw] { // few points, all still raw: return them all, as Reduce does
			return db.reduceRaw(series, from, to, points)
		}
		var all []Point
		for _, c := range cover {
			for _, p := range distinct(c) {
				all = append(all, p)
			}
		}
		return Reduction{Points: all, Tier: tier, GapLimit: to.Sub(from) / time.Duration(Buckets(points)),
			Count: r.n, NotOK: r.notOK}, errors.Join(bad...)
	}
	pts := r.result()
	return Reduction{Points: pts, Tier: tier, GapLimit: gapLimit(pts, from, to, points, tier.Width()),
		Count: r.n, NotOK: r.notOK}, errors.Join(bad...)
}

// reduceRaw is Reduce over the raw points.
func (db *DB) reduceRaw(series string, from, to time.Time, points int) (Reduction, error) {
	r := newReducer(clampNano(from), clampNano(to), points)
	err := db.Scan(series, from, to, func(p Point) bool { r.add(p); return true })
	var ce *ChunkError
	if err != nil && !errors.As(err, &ce) {
		return Reduction{}, err
	}
	pts := r.result()
	return Reduction{Points: pts, Tier: TierRaw, GapLimit: GapLimit(pts, from, to, points), Count: r.n, NotOK: r.notOK}, err
}

// horizonsNano returns series' horizons in ns (-2^63 for none).
func (db *DB) horizonsNano(series string) ([3]int64, error) {
	var hz [3]int64
	if db.isClosed() {
		return hz, ErrClosed
	}
	err := db.bolt.View(func(tx *bolt.Tx) error {
		for t := TierRaw; t <= TierHour; t++ {
			hz[t] = horizon(tx, series, t)
		}
		return nil
	})
	return hz, err
}

// cover returns, in time order, roll-ups that together summarise series'
// stored points in [lo, hi) (see ReduceTiered), and its buffered points,
// read consistently (no Flush in between); and the unreadable chunks.
func (db *DB) cover(series string, t Tier, lo, hi int64, hz [3]int64) ([]Rollup, []Point, []error, error) {
	db.flushMu.Lock()
	defer db.flushMu.Unlock()
	if db.isClosed() {
		return nil, nil, nil, ErrClosed
	}
	var out []Rollup
	var bad []error
	err := db.bolt.View(func(tx *bolt.Tx) error {
		var err error
		out, bad, err = coverTx(tx, nil, nil, series, t, lo, hi, hz)
		return err
	})
	buf := slices.DeleteFunc(db.buffered(series), func(p Point) bool { n := p.At.UnixNano(); return n < lo || n >= hi })
	return out, buf, bad, err
}

// coverTx appends to dst the roll-ups of tier t whose intervals lie wholly
// in [lo, hi), and covers the rest at each end from the tier below; raw
// points at the ends make partial-minute roll-ups. A tier whose horizon is
// after the part's start is not read.
func coverTx(tx *bolt.Tx, dst []Rollup, bad []error, series string, t Tier, lo, hi int64, hz [3]int64) ([]Rollup, []error, error) {
	if lo >= hi || lo < hz[t] {
		return dst, bad, nil
	}
	if t == TierRaw {
		pts, _, skipped := rawPoints(tx, series, lo, hi)
		return append(dst, ComputeRollups(pts, RollupMinute)...), append(bad, skipped...), nil
	}
	w := int64(t.Width())
	a, b := ceilNano(lo, w), floorNano(hi, w)
	if a >= b {
		return coverTx(tx, dst, bad, series, t-1, lo, hi, hz)
	}
	dst, bad, err := coverTx(tx, dst, bad, series, t-1, lo, a, hz)
	if err != nil {
		return dst, bad, err
	}
	if dst, err = readRollups(tx, dst, series, t, a, b); err != nil {
		return dst, bad, err
	}
	return coverTx(tx, dst, bad, series, t-1, b, hi, hz)
}

// rawPoints decodes series' stored points in [lo, hi) in tx. It also
// returns the start of the first chunk that starts at or after hi (the
// largest time when there is none) and the unreadable chunks it skipped.
func rawPoints(tx *bolt.Tx, series string, lo, hi int64) ([]Point, int64, []error) {
	after := int64(1<<63 - 1)
	s := tx.Bucket(bucketSeries).Bucket([]byte(series))
	if s == nil {
		return nil, after, nil
	}
	var pts []Point
	var bad []error
	c := s.Cursor()
	for k, v := seekCovering(c, lo); k != nil; k, v = c.Next() {
		kt, ok := keyTime(k)
		if !ok || v == nil {
			continue
		}
		if kt >= hi {
			after = kt
			break
		}
		got, err := decodeChunk(v)
		if err != nil {
			bad = append(bad, &ChunkError{Series: series, Start: time.Unix(0, kt).UTC(), Err: err})
			continue
		}
		for _, p := range got {
			if n := p.At.UnixNano(); n >= lo && n < hi {
				pts = append(pts, p)
			}
		}
	}
	return pts, after, bad
}

// addBuffered folds points not yet flushed into the cover: each minute of
// them joins the roll-up whose interval holds it, or is inserted in time
// order where none does.
func addBuffered(cover []Rollup, buf []Point) []Rollup {
	if len(buf) == 0 {
		return cover
	}
	slices.SortStableFunc(buf, func(a, b Point) int { return a.At.Compare(b.At) })
	for _, br := range ComputeRollups(buf, RollupMinute) {
		i, _ := slices.BinarySearchFunc(cover, br.Start, func(r Rollup, t time.Time) int {
			if r.End.After(t) {
				if r.Start.After(t) {
					return 1
				}
				return 0
			}
			return -1
		})
		if i < len(cover) && !cover[i].Start.After(br.Start) && cover[i].End.After(br.Start) {
			start, end := cover[i].Start, cover[i].End
			cover[i] = combine(cover[i], br)
			cover[i].Start, cover[i].End = start, end
			continue
		}
		cover = slices.Insert(cover, i, br)
	}
	return cover
}

// distinct returns the points a roll-up keeps, without repeats, in time
// order (slot order on equal times).
func distinct(r Rollup) []Point {
	var out []Point
	for _, p := range r.slots() {
		if !slices.ContainsFunc(out, func(q Point) bool { return sameBits(q, *p) }) {
			out = append(out, *p)
		}
	}
	slices.SortStableFunc(out, func(a, b Point) int { return a.At.Compare(b.At) })
	return out
}

// addRollup puts a roll-up's points into the fine bucket of its start
// (clamped to lo), in the slots the points themselves would take, numbered
// in time order (slot order on equal times) as a stream of them would be.
func (r *reducer) addRollup(c Rollup, lo int64) {
	r.n += c.Count
	r.notOK += c.NotOK
	b := r.bucketOf(max(c.Start.UnixNano(), lo))
	if len(r.fine) == 0 || r.fine[len(r.fine)-1].idx != b {
		r.fine = append(r.fine, bucket{idx: b})
	}
	f := &r.fine[len(r.fine)-1]
	var sl [6]Point
	n := 0
	if c.Valid > 0 {
		sl[0], sl[1], sl[2], sl[3] = c.First, c.MinPoint, c.MaxPoint, c.Last
		n = 4
	}
	if c.Marks() > 0 {
		sl[n], sl[n+1] = c.FirstMark, c.LastMark
		n += 2
	}
	var canon [6]int // the first slot holding the same point
	for j := range n {
		canon[j] = j
		for i := range j {
			if canon[i] == i && sameBits(sl[i], sl[j]) {
				canon[j] = i
				break
			}
		}
	}
	seq := func(j int) slot {
		c, rank := canon[j], 0
		for k := range n {
			if canon[k] == k && (sl[k].At.Before(sl[c].At) || sl[k].At.Equal(sl[c].At) && k < c) {
				rank++
			}
		}
		return slot{true, r.seq + rank, sl[j]}
	}
	if c.Valid > 0 {
		f.firstOK = earlier(f.firstOK, seq(0))
		f.minOK = lower(f.minOK, seq(1))
		f.maxOK = higher(f.maxOK, seq(2))
		f.lastOK = later(f.lastOK, seq(3))
	}
	if c.Marks() > 0 {
		f.firstBad = earlier(f.firstBad, seq(n-2))
		f.lastBad = later(f.lastBad, seq(n-1))
	}
	r.seq += n
}

// gapLimit is GapLimit for buckets whose edges moved by up to snap.
func gapLimit(pts []Point, from, to time.Time, points int, snap time.Duration) time.Duration {
	w := to.Sub(from)/time.Duration(Buckets(points)) + snap
	return max(w, GapLimit(pts, from, to, points))
}
