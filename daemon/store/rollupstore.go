package store

import (
	"fmt"
	"slices"
	"time"

	bolt "go.etcd.io/bbolt"
)

// A Tier is one resolution a series is kept at: every point (raw), one
// roll-up a minute, one an hour. Each has its own retention.
type Tier int

const (
	TierRaw Tier = iota
	TierMinute
	TierHour
)

// String names the tier as the API and the config do: raw, minute, hour.
func (t Tier) String() string {
	switch t {
	case TierRaw:
		return "raw"
	case TierMinute:
		return "minute"
	case TierHour:
		return "hour"
	}
	return fmt.Sprintf("tier(%d)", int(t))
}

// Width is the interval one roll-up of the tier covers; 0 for raw.
func (t Tier) Width() time.Duration {
	switch t {
	case TierMinute:
		return RollupMinute
	case TierHour:
		return RollupHour
	}
	return 0
}

// Buckets of the roll-up tiers, each holding one nested bucket per series
// with a record (rollup_codec.go) per interval under chunkKey(start); and
// horizons/<series>/<tier> (8 bytes, ns, as chunkKey): the tier's data
// is complete at and after that time, older data of the tier having been
// deleted by retention. No horizon means nothing was ever deleted.
var (
	bucketMinutes  = []byte("rollups-1m")
	bucketHours    = []byte("rollups-1h")
	bucketHorizons = []byte("horizons")
)

// tierBucket returns the bucket of a tier's roll-ups.
func tierBucket(t Tier) []byte {
	if t == TierHour {
		return bucketHours
	}
	return bucketMinutes
}

// rollupBucket returns series' bucket of tier t, creating it when create
// is set (the transaction must then be writable); nil when absent.
func rollupBucket(tx *bolt.Tx, t Tier, series string, create bool) (*bolt.Bucket, error) {
	top := tx.Bucket(tierBucket(t))
	if top == nil {
		if !create {
			return nil, nil
		}
		var err error
		if top, err = tx.CreateBucket(tierBucket(t)); err != nil {
			return nil, err
		}
	}
	if !create {
		return top.Bucket([]byte(series)), nil
	}
	b, err := top.CreateBucketIfNotExists([]byte(series))
	if b != nil {
		b.FillPercent = fillPercent
	}
	return b, err
}

// horizonKeys name the tiers in a series' horizons bucket.
var horizonKeys = [...][]byte{TierRaw: []byte("raw"), TierMinute: []byte("1m"), TierHour: []byte("1h")}

// horizon returns where tier t of series is complete from (ns), or -2^63.
func horizon(tx *bolt.Tx, series string, t Tier) int64 {
	if h := tx.Bucket(bucketHorizons); h != nil {
		if s := h.Bucket([]byte(series)); s != nil {
			if ns, ok := keyTime(s.Get(horizonKeys[t])); ok {
				return ns
			}
		}
	}
	return -1 << 63
}

// raiseHorizon moves tier t's horizon of series to ns, if that is later.
func raiseHorizon(tx *bolt.Tx, series string, t Tier, ns int64) error {
	if ns <= horizon(tx, series, t) {
		return nil
	}
	h, err := tx.CreateBucketIfNotExists(bucketHorizons)
	if err != nil {
		return err
	}
	s, err := h.CreateBucketIfNotExists([]byte(series))
	if err != nil {
		return err
	}
	return s.Put(horizonKeys[t], chunkKey(ns))
}

// Horizons returns, per tier, the time from which series' data of that
// tier is complete (older data of the tier was deleted by retention); a
// zero time means none was ever deleted.
func (db *DB) Horizons(series string) ([3]time.Time, error) {
	var out [3]time.Time
	if db.isClosed() {
		return out, ErrClosed
	}
	err := db.bolt.View(func(tx *bolt.Tx) error {
		for t := TierRaw; t <= TierHour; t++ {
			if ns := horizon(tx, series, t); ns != -1<<63 {
				out[t] = time.Unix(0, ns).UTC()
			}
		}
		return nil
	})
	return out, err
}

// addRollups folds a flush's sorted new points of series into its stored
// minute and hour roll-ups, in the flush's transaction: each interval's
// record is read, combined with the new points' roll-up and written back.
// A record that cannot be read is replaced (roll-ups are derived data).
func addRollups(tx *bolt.Tx, series string, pts []Point) error {
	for _, t := range []Tier{TierMinute, TierHour} {
		b, err := rollupBucket(tx, t, series, true)
		if err != nil {
			return err
		}
		for _, r := range ComputeRollups(pts, t.Width()) {
			k := chunkKey(r.Start.UnixNano())
			if old := b.Get(k); old != nil {
				if o, err := decodeRollup(old, r.Start, t.Width()); err == nil {
					r = combine(o, r)
				}
			}
			if err := b.Put(k, encodeRollup(r)); err != nil {
				return err
			}
		}
	}
	return nil
}

// readRollups decodes series' records of tier t whose intervals lie
// wholly in [lo, hi), in time order, and appends them to dst.
func readRollups(tx *bolt.Tx, dst []Rollup, series string, t Tier, lo, hi int64) ([]Rollup, error) {
	b, _ := rollupBucket(tx, t, series, false)
	if b == nil || lo >= hi {
		return dst, nil
	}
	w := int64(t.Width())
	c := b.Cursor()
	for k, v := c.Seek(chunkKey(lo)); k != nil; k, v = c.Next() {
		s, ok := keyTime(k)
		if !ok || v == nil {
			continue
		}
		if s >= hi || s > hi-w {
			break
		}
		r, err := decodeRollup(v, time.Unix(0, s).UTC(), t.Width())
		if err != nil {
			return dst, fmt.Errorf("series %q: %s roll-up at %s: %w", series, t, time.Unix(0, s).UTC().Format(time.RFC3339), err)
		}
		dst = append(dst, r)
	}
	return dst, nil
}

// Rollups returns series' stored roll-ups of tier t (TierMinute or
// TierHour) whose intervals lie wholly in [from, to), in time order. Points
// still buffered are not in them yet.
func (db *DB) Rollups(series string, t Tier, from, to time.Time) ([]Rollup, error) {
	if t != TierMinute && t != TierHour {
		return nil, fmt.Errorf("roll-ups of tier %s: ask for minute or hour", t)
	}
	if db.isClosed() {
		return nil, ErrClosed
	}
	var out []Rollup
	err := db.bolt.View(func(tx *bolt.Tx) error {
		var err error
		out, err = readRollups(tx, nil, series, t, clampNano(from), clampNano(to))
		return err
	})
	return out, err
}

// rebuildHours bounds the hours one rebuild transaction recomputes (about
// 216 000 points at 10 Hz), so Flush waits at most that long.
const rebuildHours = 6

// rebuildRollups recomputes series' roll-ups over the whole hours that
// touch [lo, hi) from the stored raw points: minute records of the whole
// minutes at or after the raw horizon, then each hour's record from its
// minute records (so an hour at the raw horizon keeps what retention took
// from it). It works in transactions of rebuildHours hours, each holding
// flushMu, so a Flush never slips points in between the read and the
// write; points still buffered join their roll-ups when they are flushed.
// It returns the unreadable chunks it skipped.
func (db *DB) rebuildRollups(series string, lo, hi int64) ([]error, error) {
	first, last, ok, err := db.extent(series)
	if err != nil || !ok {
		return nil, err
	}
	h := int64(time.Hour)
	lo, hi = max(lo, first), min(hi, last)
	if lo > hi {
		return nil, nil
	}
	a, end := floorNano(lo, h), floorNano(hi, h)+h
	var bad []error
	for a < end {
		b := min(a+rebuildHours*h, end)
		next, skipped, err := db.rebuildSpan(series, a, b)
		if err != nil {
			return bad, fmt.Errorf("roll-ups of %q from %s: %w", series, time.Unix(0, a).UTC().Format(time.RFC3339), err)
		}
		bad = append(bad, skipped...)
		a = max(b, min(next, end))
	}
	return bad, nil
}

// extent returns the key of series' first chunk and its last point's time.
func (db *DB) extent(series string) (first, last int64, ok bool, err error) {
	err = db.bolt.View(func(tx *bolt.Tx) error {
		b := tx.Bucket(bucketSeries).Bucket([]byte(series))
		if b == nil {
			return nil
		}
		c := b.Cursor()
		for k, _ := c.First(); k != nil; k, _ = c.Next() {
			if kt, isKey := keyTime(k); isKey {
				first, ok = kt, true
				break
			}
		}
		for k, v := c.Last(); k != nil && ok; k, v = c.Prev() {
			if kt, isKey := keyTime(k); isKey && v != nil {
				last = kt
				if h, err := readHead(v); err == nil {
					last = h.last
				}
				break
			}
		}
		return nil
	})
	return first, last, ok, err
}

// rebuildSpan recomputes the roll-ups of the hours [a, b) in one
// transaction and returns where the next stored point's hour starts (to
// skip empty stretches) and the unreadable chunks.
func (db *DB) rebuildSpan(series string, a, b int64) (int64, []error, error) {
	db.flushMu.Lock()
	defer db.flushMu.Unlock()
	if db.isClosed() {
		return 0, nil, ErrClosed
	}
	var next int64
	var bad []error
	err := db.bolt.Update(func(tx *bolt.Tx) error {
		var err error
		next, bad, err = rebuildTx(tx, series, a, b)
		return err
	})
	return next, bad, err
}

// rebuildTx recomputes, in tx, series' roll-ups of the hours [a, b): the
// minute records from the raw points at or after the raw horizon (rounded
// up to a minute), then the hour records from the minute records. It
// returns the hour of the first chunk starting at or after b (or the
// largest time) and the unreadable chunks it skipped.
func rebuildTx(tx *bolt.Tx, series string, a, b int64) (int64, []error, error) {
	next := int64(1<<63 - 1)
	s := tx.Bucket(bucketSeries).Bucket([]byte(series))
	if s == nil {
		return next, nil, nil
	}
	var bad []error
	from := max(a, ceilNano(horizon(tx, series, TierRaw), int64(time.Minute)))
	var pts []Point
	c := s.Cursor()
	for k, v := seekCovering(c, from); k != nil; k, v = c.Next() {
		kt, ok := keyTime(k)
		if !ok || v == nil {
			continue
		}
		if kt >= b {
			next = floorNano(kt, int64(time.Hour))
			break
		}
		got, err := decodeChunk(v)
		if err != nil {
			bad = append(bad, &ChunkError{Series: series, Start: time.Unix(0, kt).UTC(), Err: err})
			continue
		}
		for _, p := range got {
			if n := p.At.UnixNano(); n >= from && n < b {
				pts = append(pts, p)
			}
		}
	}
	if from < b {
		if err := replaceRollups(tx, series, TierMinute, from, b, ComputeRollups(pts, RollupMinute)); err != nil {
			return next, bad, err
		}
	}
	mins, err := readRollups(tx, nil, series, TierMinute, a, b)
	if err != nil {
		return next, bad, err
	}
	var hours []Rollup
	for _, m := range mins {
		hs := bucketStart(m.Start, RollupHour)
		if len(hours) == 0 || !hours[len(hours)-1].Start.Equal(hs) {
			hours = append(hours, newRollup(hs, RollupHour))
		}
		hours[len(hours)-1] = combine(hours[len(hours)-1], m)
	}
	for i := range hours { // combine took the first minute's Start and End; an hour spans the hour
		hours[i].Start, hours[i].End = bucketStart(hours[i].Start, RollupHour), bucketStart(hours[i].Start, RollupHour).Add(RollupHour)
	}
	return next, bad, replaceRollups(tx, series, TierHour, a, b, hours)
}

// replaceRollups deletes series' records of tier t starting in [lo, hi)
// and writes rs in their place.
func replaceRollups(tx *bolt.Tx, series string, t Tier, lo, hi int64, rs []Rollup) error {
	b, err := rollupBucket(tx, t, series, true)
	if err != nil {
		return err
	}
	var keys [][]byte
	c := b.Cursor()
	for k, _ := c.Seek(chunkKey(lo)); k != nil; k, _ = c.Next() {
		if kt, ok := keyTime(k); ok && kt >= hi {
			break
		}
		keys = append(keys, slices.Clone(k))
	}
	for _, k := range keys { // collected first: deleting under a cursor may skip keys
		if err := b.Delete(k); err != nil {
			return err
		}
	}
	for _, r := range rs {
		if err := b.Put(chunkKey(r.Start.UnixNano()), encodeRollup(r)); err != nil {
			return err
		}
	}
	return nil
}

// ceilNano rounds ns up to a multiple of w, saturating at the largest time.
func ceilNano(ns, w int64) int64 {
	f := floorNano(ns, w)
	if f == ns {
		return ns
	}
	if f > 1<<63-1-w {
		return 1<<63 - 1
	}
	return f + w
}

// deleteBatch bounds the keys one retention transaction deletes, so Flush
// never waits long behind retention.
const deleteBatch = 512

// DeleteRollupsBefore deletes series' roll-ups of tier t (TierMinute or
// TierHour) whose intervals end at or before before, and returns how many
// went. It works in transactions of at most 512 records; a Flush may run
// between them.
func (db *DB) DeleteRollupsBefore(series string, t Tier, before time.Time) (int, error) {
	if t != TierMinute && t != TierHour {
		return 0, fmt.Errorf("delete roll-ups of tier %s: ask for minute or hour", t)
	}
	cut := clampNano(before)
	w := int64(t.Width())
	total := 0
	for {
		n, more, err := db.deleteRollupBatch(series, t, cut, w)
		total += n
		if err != nil {
			return total, fmt.Errorf("delete %s roll-ups of %q before %s: %w", t, series, before.Format(time.RFC3339), err)
		}
		if !more {
			return total, nil
		}
		if betweenBatches != nil {
			betweenBatches()
		}
	}
}

// deleteRollupBatch deletes up to deleteBatch records ending by cut and
// reports whether more may be left.
func (db *DB) deleteRollupBatch(series string, t Tier, cut, w int64) (int, bool, error) {
	db.flushMu.Lock()
	defer db.flushMu.Unlock()
	if db.isClosed() {
		return 0, false, ErrClosed
	}
	n, more := 0, false
	err := db.bolt.Update(func(tx *bolt.Tx) error {
		n, more = 0, false
		b, _ := rollupBucket(tx, t, series, false)
		if b == nil {
			return nil
		}
		var keys [][]byte
		end := int64(-1 << 63)
		c := b.Cursor()
		for k, _ := c.First(); k != nil; k, _ = c.Next() {
			kt, ok := keyTime(k)
			if !ok {
				continue
			}
			if cut < -1<<63+w || kt > cut-w {
				break
			}
			if len(keys) == deleteBatch {
				more = true
				break
			}
			keys = append(keys, slices.Clone(k))
			end = kt + w
		}
		for _, k := range keys {
			if err := b.Delete(k); err != nil {
				return err
			}
		}
		n = len(keys)
		if n == 0 {
			return nil
		}
		return raiseHorizon(tx, series, t, end)
	})
	return n, more, err
}
