package store

import (
	"encoding/binary"
	"fmt"
	"maps"
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
// with a group of roll-ups (rollup_codec.go: an hour of minutes, a day of
// hours) under chunkKey(the group's start); and
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

// loadGroup decodes series' stored group of tier t starting at gs (ns);
// none stored gives nil.
func loadGroup(b *bolt.Bucket, t Tier, gs int64) ([]Rollup, error) {
	v := b.Get(chunkKey(gs))
	if v == nil {
		return nil, nil
	}
	return decodeGroup(v, time.Unix(0, gs).UTC(), t.Width(), groupWidth(t))
}

// storeGroup writes the group of tier t starting at gs, or deletes it
// when rs is empty.
func storeGroup(b *bolt.Bucket, t Tier, gs int64, rs []Rollup) error {
	if len(rs) == 0 {
		return b.Delete(chunkKey(gs))
	}
	return b.Put(chunkKey(gs), encodeGroup(time.Unix(0, gs).UTC(), t.Width(), rs))
}

// byGroup splits roll-ups sorted by Start into runs of one group each.
func byGroup(rs []Rollup, t Tier) [][]Rollup {
	g := int64(groupWidth(t))
	var out [][]Rollup
	for i := 0; i < len(rs); {
		gs := floorNano(rs[i].Start.UnixNano(), g)
		j := i + 1
		for j < len(rs) && floorNano(rs[j].Start.UnixNano(), g) == gs {
			j++
		}
		out = append(out, rs[i:j])
		i = j
	}
	return out
}

// keyOpen holds, in a series' tier bucket, the newest roll-up on its own
// (encodeOpen), kept
// out of its group until a later interval begins: a flush then rewrites a
// record of a few points instead of a whole group (measured at the daemon's
// cadence, BenchmarkCadence8: re-encoding the open hour's group on every
// flush cost more CPU than the chunks). The tier's roll-ups are its groups
// and this one; keys of other lengths than 8 are never chunk-style keys.
var keyOpen = []byte("open")

// loadOpen returns the open roll-up of a tier bucket, if there is one.
func loadOpen(b *bolt.Bucket, t Tier) (Rollup, bool) {
	v := b.Get(keyOpen)
	if v == nil {
		return Rollup{}, false
	}
	r, err := decodeOpen(v, t.Width())
	return r, err == nil // unreadable: derived data, dropped
}

// storeOpen writes r as the open roll-up.
func storeOpen(b *bolt.Bucket, r Rollup) error { return b.Put(keyOpen, encodeOpen(r)) }

// mergeIntoGroups combines roll-ups (sorted by Start) into their stored
// groups.
func mergeIntoGroups(b *bolt.Bucket, t Tier, rs []Rollup) error {
	for _, add := range byGroup(rs, t) {
		gs := floorNano(add[0].Start.UnixNano(), int64(groupWidth(t)))
		old, err := loadGroup(b, t, gs)
		if err != nil {
			old = nil // unreadable: replaced (roll-ups are derived data)
		}
		if err := storeGroup(b, t, gs, mergeRollupLists(old, add)); err != nil {
			return err
		}
	}
	return nil
}

// closeOpen moves the open roll-up, if any, into its group.
func closeOpen(b *bolt.Bucket, t Tier) error {
	open, ok := loadOpen(b, t)
	if err := b.Delete(keyOpen); err != nil || !ok {
		return err
	}
	return mergeIntoGroups(b, t, []Rollup{open})
}

// addRollups folds a flush's sorted new points of series into its stored
// minute and hour roll-ups, in the flush's transaction. The newest
// interval's roll-up stays open (keyOpen); the others are combined into
// their groups, which are read and written back.
func addRollups(tx *bolt.Tx, series string, pts []Point) error {
	mins := ComputeRollups(pts, RollupMinute)
	for _, t := range []Tier{TierMinute, TierHour} {
		b, err := rollupBucket(tx, t, series, true)
		if err != nil {
			return err
		}
		rs := mins
		if t == TierHour {
			rs = hoursOf(mins) // one pass over the points, not two
		}
		last := rs[len(rs)-1]
		if open, ok := loadOpen(b, t); ok {
			switch c := open.Start.Compare(last.Start); {
			case c == 0:
				last = combine(open, last)
			case c < 0:
				rs = mergeRollupLists([]Rollup{open}, rs) // the open one closes
			default: // all the new points are older than the open interval
				if err := mergeIntoGroups(b, t, rs); err != nil {
					return err
				}
				continue
			}
		}
		if err := mergeIntoGroups(b, t, rs[:len(rs)-1]); err != nil {
			return err
		}
		if err := storeOpen(b, last); err != nil {
			return err
		}
	}
	return nil
}

// mergeRollupLists merges two lists of roll-ups of one width, each sorted
// by Start: roll-ups of the same interval are combined (a's first).
func mergeRollupLists(a, b []Rollup) []Rollup {
	out := make([]Rollup, 0, len(a)+len(b))
	for len(a) > 0 && len(b) > 0 {
		switch c := a[0].Start.Compare(b[0].Start); {
		case c < 0:
			out, a = append(out, a[0]), a[1:]
		case c > 0:
			out, b = append(out, b[0]), b[1:]
		default:
			out, a, b = append(out, combine(a[0], b[0])), a[1:], b[1:]
		}
	}
	return append(append(out, a...), b...)
}

// readRollups decodes series' roll-ups of tier t whose intervals lie
// wholly in [lo, hi), in time order, and appends them to dst.
func readRollups(tx *bolt.Tx, dst []Rollup, series string, t Tier, lo, hi int64) ([]Rollup, error) {
	b, _ := rollupBucket(tx, t, series, false)
	if b == nil || lo >= hi {
		return dst, nil
	}
	w := int64(t.Width())
	n0 := len(dst)
	c := b.Cursor()
	for k, v := c.Seek(chunkKey(floorNano(lo, int64(groupWidth(t))))); k != nil; k, v = c.Next() {
		gs, ok := keyTime(k)
		if !ok || v == nil {
			continue
		}
		if gs >= hi {
			break
		}
		rs, err := decodeGroup(v, time.Unix(0, gs).UTC(), t.Width(), groupWidth(t))
		if err != nil {
			return dst, fmt.Errorf("series %q: %s roll-ups from %s: %w", series, t, time.Unix(0, gs).UTC().Format(time.RFC3339), err)
		}
		for _, r := range rs {
			if s := r.Start.UnixNano(); s >= lo && s <= hi-w {
				dst = append(dst, r)
			}
		}
	}
	if open, ok := loadOpen(b, t); ok {
		if s := open.Start.UnixNano(); s >= lo && s <= hi-w {
			i, found := slices.BinarySearchFunc(dst[n0:], open.Start, func(r Rollup, t time.Time) int { return r.Start.Compare(t) })
			if found { // cannot happen (the open one is in no group); keep both counted once
				dst[n0+i] = combine(dst[n0+i], open)
			} else {
				dst = slices.Insert(dst, n0+i, open)
			}
		}
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
	if tx.Bucket(bucketSeries).Bucket([]byte(series)) == nil {
		return next, nil, nil
	}
	from := max(a, ceilNano(horizon(tx, series, TierRaw), int64(time.Minute)))
	pts, after, bad := rawPoints(tx, series, from, b)
	if after != next {
		next = floorNano(after, int64(time.Hour))
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
	return next, bad, replaceRollups(tx, series, TierHour, a, b, hoursOf(mins))
}

// hoursOf combines minute roll-ups sorted by Start into hour roll-ups.
func hoursOf(mins []Rollup) []Rollup {
	var hours []Rollup
	for _, m := range mins {
		hs := bucketStart(m.Start, RollupHour)
		if len(hours) == 0 || !hours[len(hours)-1].Start.Equal(hs) {
			hours = append(hours, newRollup(hs, RollupHour))
		}
		h := &hours[len(hours)-1]
		*h = combine(*h, m)
		h.Start, h.End = hs, hs.Add(RollupHour) // combine took the minute's; an hour spans the hour
	}
	return hours
}

// replaceRollups deletes series' roll-ups of tier t starting in [lo, hi)
// and writes rs (sorted, all starting in [lo, hi)) in their place.
func replaceRollups(tx *bolt.Tx, series string, t Tier, lo, hi int64, rs []Rollup) error {
	b, err := rollupBucket(tx, t, series, true)
	if err != nil {
		return err
	}
	if err := closeOpen(b, t); err != nil { // every roll-up in a group, so the rest is group work
		return err
	}
	g := int64(groupWidth(t))
	groups := map[int64][]Rollup{} // every group touched: the stored ones in range and rs's
	c := b.Cursor()
	for k, _ := c.Seek(chunkKey(floorNano(lo, g))); k != nil; k, _ = c.Next() {
		gs, ok := keyTime(k)
		if ok && gs >= hi {
			break
		}
		if ok {
			groups[gs] = nil
		}
	}
	for _, run := range byGroup(rs, t) {
		groups[floorNano(run[0].Start.UnixNano(), g)] = run
	}
	for _, gs := range slices.Sorted(maps.Keys(groups)) { // not under the cursor: storing may delete
		old, err := loadGroup(b, t, gs)
		if err != nil {
			old = nil // unreadable: rebuilt from what is given
		}
		kept := slices.DeleteFunc(old, func(r Rollup) bool { s := r.Start.UnixNano(); return s >= lo && s < hi })
		if err := storeGroup(b, t, gs, mergeRollupLists(kept, groups[gs])); err != nil {
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
// TierHour) in whole stored groups (an hour of minutes, a day of hours)
// that end at or before before, and returns how many roll-ups went. It
// works in transactions of at most 512 groups; a Flush may run between
// them.
func (db *DB) DeleteRollupsBefore(series string, t Tier, before time.Time) (int, error) {
	if t != TierMinute && t != TierHour {
		return 0, fmt.Errorf("delete roll-ups of tier %s: ask for minute or hour", t)
	}
	cut := clampNano(before)
	w := int64(groupWidth(t))
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
		for k, v := c.First(); k != nil; k, v = c.Next() {
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
			if len(v) > 5 {
				members, _ := binary.Uvarint(v[5:])
				n += int(members)
			}
		}
		if open, ok := loadOpen(b, t); ok && !more && cut >= -1<<63+w && floorNano(open.Start.UnixNano(), w) <= cut-w {
			keys, end, n = append(keys, keyOpen), max(end, floorNano(open.Start.UnixNano(), w)+w), n+1
		}
		for _, k := range keys {
			if err := b.Delete(k); err != nil {
				return err
			}
		}
		if len(keys) == 0 {
			return nil
		}
		return raiseHorizon(tx, series, t, end)
	})
	return n, more, err
}
