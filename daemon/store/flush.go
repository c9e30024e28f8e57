package store

import (
	"cmp"
	"encoding/binary"
	"fmt"
	"maps"
	"slices"
	"time"

	bolt "go.etcd.io/bbolt"
)

// fillPercent packs series pages tightly: chunks are appended in time order,
// so bbolt's default half-full split would leave half of every page empty.
const fillPercent = 0.9

// Flush writes every buffered point in one bbolt transaction. If the write
// fails, the points go back to the buffer for the next Flush (which the
// buffer bound may trim, counted in Stats.Dropped) and the error is returned.
func (db *DB) Flush() error {
	db.flushMu.Lock()
	defer db.flushMu.Unlock()
	batch, err := db.take()
	if err != nil || len(batch) == 0 {
		return err
	}
	start := time.Now()
	groups := groupBySeries(batch)
	var damaged []*ChunkError
	var tails map[string]tail
	err = db.bolt.Update(func(tx *bolt.Tx) error {
		damaged, tails = nil, map[string]tail{} // keep only what the committed attempt did
		for _, g := range groups {
			t, bad, err := appendSeries(tx, g.name, g.pts, db.tails[g.name])
			if err != nil {
				return fmt.Errorf("series %q: %w", g.name, err)
			}
			damaged, tails[g.name] = append(damaged, bad...), t
			if db.rollups {
				if err := addRollups(tx, g.name, g.pts); err != nil {
					return fmt.Errorf("series %q: roll-ups: %w", g.name, err)
				}
			}
		}
		return nil
	})
	if err != nil {
		db.giveBack(batch)
		err = fmt.Errorf("flush %d points to %s: %w", len(batch), db.path, err)
		db.mu.Lock()
		db.stats.FlushErrors++
		db.stats.LastError = err
		db.mu.Unlock()
		return err
	}
	maps.Copy(db.tails, tails) // flushMu guards tails
	took, size := time.Since(start), db.fileSize()
	db.mu.Lock()
	db.stats.Written += int64(len(batch))
	db.stats.Flushes++
	db.stats.LastError = nil
	db.stats.LastFlush = took
	db.stats.Damaged += int64(len(damaged))
	db.stats.FileBytes = size
	db.mu.Unlock()
	for _, e := range damaged {
		db.log.Warn("unreadable chunk moved aside", "series", e.Series, "chunk_start", e.Start,
			"bucket", string(bucketDamaged), "err", e.Err)
	}
	return nil
}

// A group holds one series' new points, sorted by time, ties in append order.
type group struct {
	name string
	pts  []Point
}

// groupBySeries splits a batch by series (sorted by name, so every flush
// touches buckets in the same order).
func groupBySeries(batch []pending) []group {
	idx := map[string]int{}
	var gs []group
	for _, e := range batch {
		i, ok := idx[e.series]
		if !ok {
			i = len(gs)
			idx[e.series] = i
			gs = append(gs, group{name: e.series})
		}
		gs[i].pts = append(gs[i].pts, e.p)
	}
	for _, g := range gs {
		slices.SortStableFunc(g.pts, func(a, b Point) int { return a.At.Compare(b.At) })
	}
	slices.SortFunc(gs, func(a, b group) int { return cmp.Compare(a.name, b.name) })
	return gs
}

// mergeSeries merges sorted points that arrive late into a series' chunks:
// the chunk that covers the first new point and every later chunk that
// starts before the last one are decoded, merged and split again. It
// returns the unreadable chunks it moved aside.
func mergeSeries(tx *bolt.Tx, b *bolt.Bucket, series string, pts []Point) ([]*ChunkError, error) {
	first, last := pts[0].At.UnixNano(), pts[len(pts)-1].At.UnixNano()
	c := b.Cursor()
	k, v := seekCovering(c, first)
	return rechunk(tx, b, c, k, v, series, pts, last)
}

// rechunk decodes the chunks from (k, v) on while they start no later than
// last, merges pts in, and writes the result back split into chunks.
func rechunk(tx *bolt.Tx, b *bolt.Bucket, c *bolt.Cursor, k, v []byte, series string, pts []Point, last int64) ([]*ChunkError, error) {
	var old []Point
	var keys [][]byte
	var damaged []*ChunkError
	for ; k != nil; k, v = c.Next() {
		kt, ok := keyTime(k)
		if !ok || v == nil {
			continue // not a chunk; never written by this package
		}
		if kt > last {
			break
		}
		keys = append(keys, slices.Clone(k))
		got, err := decodeChunk(v)
		if err != nil {
			if err := moveAside(tx, series, k, v); err != nil {
				return nil, err
			}
			damaged = append(damaged, &ChunkError{Series: series, Start: time.Unix(0, kt).UTC(), Err: err})
			continue
		}
		old = append(old, got...)
	}
	for _, k := range keys {
		if err := b.Delete(k); err != nil {
			return nil, err
		}
	}
	for _, part := range splitChunks(mergePoints(old, pts)) {
		if err := b.Put(chunkKey(part[0].At.UnixNano()), encodeChunk(part)); err != nil {
			return nil, err
		}
	}
	return damaged, nil
}

// moveAside copies an unreadable chunk, byte for byte, to
// damaged-chunks/<series>/<key><sequence> so no write ever destroys it
// (the 8-byte sequence keeps a second copy from replacing the first).
func moveAside(tx *bolt.Tx, series string, k, v []byte) error {
	d, err := tx.CreateBucketIfNotExists(bucketDamaged)
	if err != nil {
		return err
	}
	s, err := d.CreateBucketIfNotExists([]byte(series))
	if err != nil {
		return err
	}
	seq, err := s.NextSequence()
	if err != nil {
		return err
	}
	return s.Put(binary.BigEndian.AppendUint64(slices.Clone(k), seq), slices.Clone(v))
}

// mergePoints merges two time-sorted lists; on equal times a's points come first.
func mergePoints(a, b []Point) []Point {
	out := make([]Point, 0, len(a)+len(b))
	for len(a) > 0 && len(b) > 0 {
		if b[0].At.Before(a[0].At) {
			out, b = append(out, b[0]), b[1:]
		} else {
			out, a = append(out, a[0]), a[1:]
		}
	}
	return append(append(out, a...), b...)
}

// splitChunks cuts sorted points into chunks of at most chunkMaxPoints
// points spanning less than chunkMaxSpan. A chunk grows past chunkMaxPoints
// only while the next point has the chunk's first time (keys must differ).
func splitChunks(pts []Point) [][]Point {
	var out [][]Point
	for len(pts) > 0 {
		s := pts[0].At
		n := 1
		for n < len(pts) && pts[n].At.Sub(s) < chunkMaxSpan && (n < chunkMaxPoints || pts[n].At.Equal(s)) {
			n++
		}
		out = append(out, pts[:n:n])
		pts = pts[n:]
	}
	return out
}

// seekCovering positions c on the chunk that covers time ns (the last one
// starting at or before it), or on the first chunk if all start later.
func seekCovering(c *bolt.Cursor, ns int64) ([]byte, []byte) {
	k, v := c.Seek(chunkKey(ns))
	if k == nil {
		k, v = c.Last()
	} else if kt, ok := keyTime(k); ok && kt == ns {
		return k, v
	} else if pk, pv := c.Prev(); pk != nil {
		k, v = pk, pv
	} else {
		k, v = c.First()
	}
	return k, v
}
