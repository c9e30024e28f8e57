package store

import (
	"bytes"
	"errors"
	"fmt"
	"io/fs"
	"os"
	"slices"
	"time"

	bolt "go.etcd.io/bbolt"
)

// rewriteBatch bounds the chunks one Rewrite transaction touches (about
// 64·1024 points), so reprocessing a month never builds a huge transaction.
const rewriteBatch = 64

// Rewrite replaces each point of series with from ≤ At < to by fn(point),
// for reprocessing stored raw values with another calibration. It flushes
// first, then works in transactions of at most 64 chunks, calling fn with no
// transaction open (fn may call db's methods). fn must keep At; it may change
// Raw, Value, Quality and Calibration. If a Flush changes a chunk while fn
// runs, that chunk is read again and fn is called again for its points, so
// fn should depend only on its argument. Rewrite returns how many points
// were passed through fn and committed; on an error, the batches before it
// stay committed. Unreadable chunks are left as they are and reported as
// *ChunkError after the others are done.
//
// The minute and hour roll-ups of the hours a batch touches are rebuilt in
// that batch's transaction, so they always match the raw points. Points in
// the minute at the raw retention's edge (before the raw horizon rounded
// up to a minute), whose minute has lost points to retention, are not
// rewritten: their roll-ups could no longer be rebuilt.
func (db *DB) Rewrite(series string, from, to time.Time, fn func(Point) Point) (int, error) {
	if err := db.Flush(); err != nil {
		return 0, fmt.Errorf("rewrite %q: %w", series, err)
	}
	lo, hi := clampNano(from), clampNano(to)
	if hz, err := db.Horizons(series); err != nil {
		return 0, fmt.Errorf("rewrite %q: %w", series, err)
	} else if !hz[TierRaw].IsZero() {
		lo = max(lo, ceilNano(hz[TierRaw].UnixNano(), int64(time.Minute)))
	}
	done, resume, retries := 0, []byte(nil), 0
	var errs []error
	for {
		chunks, err := db.readBatch(series, lo, hi, resume)
		if err != nil || len(chunks) == 0 {
			return done, errors.Join(append(errs, err)...)
		}
		n, conflict, bad, err := db.rewriteChunks(series, chunks, lo, hi, fn)
		if err != nil {
			return done, errors.Join(append(errs, fmt.Errorf("rewrite %q: %w", series, err))...)
		}
		done += n
		errs = append(errs, bad...)
		if conflict >= 0 { // retry from the chunk a Flush changed
			if conflict == 0 {
				if retries++; retries > 10 {
					return done, errors.Join(append(errs, fmt.Errorf("rewrite %q: chunks keep changing underneath; try again", series))...)
				}
			}
			chunks = chunks[:conflict]
		} else {
			retries = 0
		}
		if len(chunks) > 0 {
			resume = chunkKey(chunks[len(chunks)-1].start + 1)
		}
	}
}

// readBatch copies up to rewriteBatch chunks of series overlapping [lo, hi),
// starting at the key resume (or at the chunk covering lo when resume is nil).
func (db *DB) readBatch(series string, lo, hi int64, resume []byte) ([]rawChunk, error) {
	var out []rawChunk
	err := db.bolt.View(func(tx *bolt.Tx) error {
		b := tx.Bucket(bucketSeries).Bucket([]byte(series))
		if b == nil {
			return nil
		}
		c := b.Cursor()
		k, v := seekCovering(c, lo)
		if resume != nil {
			k, v = c.Seek(resume)
		}
		for ; k != nil && len(out) < rewriteBatch; k, v = c.Next() {
			kt, ok := keyTime(k)
			if !ok || v == nil {
				continue
			}
			if kt >= hi {
				break
			}
			out = append(out, rawChunk{kt, slices.Clone(v)})
		}
		return nil
	})
	return out, err
}

// rewriteChunks applies fn to the points of chunks in [lo, hi) and commits
// the changed chunks in one transaction, each only if no Flush changed it
// since it was read. It returns the points committed, the index of the first
// chunk that changed underneath (or -1), and the unreadable chunks.
func (db *DB) rewriteChunks(series string, chunks []rawChunk, lo, hi int64, fn func(Point) Point) (int, int, []error, error) {
	var bad []error
	updated := make([][]byte, len(chunks)) // nil: unchanged
	counts := make([]int, len(chunks))
	for i, rc := range chunks {
		pts, err := decodeChunk(rc.data)
		if err != nil {
			bad = append(bad, &ChunkError{Series: series, Start: time.Unix(0, rc.start).UTC(), Err: err})
			continue
		}
		changed := false
		for j, p := range pts {
			if n := p.At.UnixNano(); n < lo || n >= hi {
				continue
			}
			q := fn(p)
			if !q.At.Equal(p.At) {
				return 0, -1, bad, fmt.Errorf("fn moved the point at %s to %s; only Raw, Value, Quality and Calibration may change",
					p.At.Format(time.RFC3339Nano), q.At.Format(time.RFC3339Nano))
			}
			q.At = p.At
			changed = changed || !sameBits(p, q)
			pts[j] = q
			counts[i]++
		}
		if changed {
			updated[i] = encodeChunk(pts)
		}
	}
	db.flushMu.Lock()
	defer db.flushMu.Unlock()
	conflict, done := -1, 0
	err := db.bolt.Update(func(tx *bolt.Tx) error {
		conflict, done = -1, 0
		b := tx.Bucket(bucketSeries).Bucket([]byte(series))
		lo, hi, changed := int64(1<<63-1), int64(-1<<63), false
		for i, rc := range chunks {
			if b == nil {
				break // the series went away meanwhile
			}
			if !bytes.Equal(b.Get(chunkKey(rc.start)), rc.data) {
				conflict = i
				break
			}
			if updated[i] != nil {
				if err := b.Put(chunkKey(rc.start), updated[i]); err != nil {
					return err
				}
				h, _ := readHead(updated[i])
				lo, hi, changed = min(lo, h.first), max(hi, h.last), true
			}
			done += counts[i]
		}
		if !changed || !db.rollups {
			return nil
		}
		hr := int64(time.Hour)
		for a := floorNano(lo, hr); a <= hi; a += rebuildHours * hr {
			if _, _, err := rebuildTx(tx, series, a, min(a+rebuildHours*hr, floorNano(hi, hr)+hr)); err != nil {
				return fmt.Errorf("roll-ups: %w", err)
			}
		}
		return nil
	})
	if err != nil {
		return 0, -1, bad, err
	}
	return done, conflict, bad, nil
}

// DeleteBefore deletes the chunks of series whose points are all earlier
// than t, and returns how many points went. Chunks that straddle t stay
// whole; buffered points are not touched (so retention still frees space
// while a full disk keeps Flush failing). Chunks whose header cannot be read
// are kept and reported as *ChunkError. It works in transactions of at
// most 512 chunks, so a Flush waits for one of them at most, and records
// the raw horizon (Horizons) as it goes; the roll-ups stay.
func (db *DB) DeleteBefore(series string, t time.Time) (int, error) {
	cut := clampNano(t)
	var errs []error
	deleted := 0
	var resume []byte
	for {
		n, next, bad, err := db.deleteChunkBatch(series, cut, resume)
		deleted += n
		errs = append(errs, bad...)
		if err != nil {
			return deleted, fmt.Errorf("delete from %q before %s: %w", series, t.Format(time.RFC3339), err)
		}
		if next == nil {
			return deleted, errors.Join(errs...)
		}
		if betweenBatches != nil {
			betweenBatches()
		}
		resume = next
	}
}

// betweenBatches, when set (by tests), runs between two retention
// transactions, holding no lock.
var betweenBatches func()

// deleteChunkBatch deletes up to deleteBatch chunks of series lying wholly
// before cut, from the key resume on (the first chunk when nil). It returns
// the points deleted, the key to go on from (nil when done) and the
// unreadable chunks.
func (db *DB) deleteChunkBatch(series string, cut int64, resume []byte) (int, []byte, []error, error) {
	db.flushMu.Lock()
	defer db.flushMu.Unlock()
	if db.isClosed() {
		return 0, nil, nil, ErrClosed
	}
	db.forgetTail(series)
	var errs []error
	var next []byte
	deleted := 0
	err := db.bolt.Update(func(tx *bolt.Tx) error {
		errs, next, deleted = nil, nil, 0
		b := tx.Bucket(bucketSeries).Bucket([]byte(series))
		if b == nil {
			return nil
		}
		var keys [][]byte
		lastGone := int64(-1 << 63)
		c := b.Cursor()
		k, v := c.First()
		if resume != nil {
			k, v = c.Seek(resume)
		}
		for ; k != nil; k, v = c.Next() {
			kt, ok := keyTime(k)
			if !ok || v == nil {
				continue
			}
			if kt >= cut {
				break
			}
			if len(keys) == deleteBatch {
				next = slices.Clone(k)
				break
			}
			h, err := readHead(v)
			if err != nil {
				errs = append(errs, &ChunkError{Series: series, Start: time.Unix(0, kt).UTC(), Err: err})
				continue
			}
			if h.last < cut {
				keys = append(keys, slices.Clone(k))
				deleted += h.n
				lastGone = max(lastGone, h.last)
			}
		}
		for _, k := range keys { // collected first: deleting under a cursor may skip keys
			if err := b.Delete(k); err != nil {
				return err
			}
		}
		if len(keys) == 0 {
			return nil
		}
		return raiseHorizon(tx, series, TierRaw, lastGone+1)
	})
	if err != nil {
		return 0, nil, nil, err
	}
	return deleted, next, errs, nil
}

// Compact flushes, then writes a compacted copy of the whole file (every
// bucket, the daemon's included) to dst, which must not exist yet: bbolt
// never shrinks a file, so this is how space freed by retention is given
// back. The copy runs in one read transaction; Append and Flush go on
// meanwhile, and what they add after it started is not in the copy.
func (db *DB) Compact(dst string) error {
	if _, err := os.Stat(dst); !errors.Is(err, fs.ErrNotExist) {
		return fmt.Errorf("compact to %s: the file exists (or cannot be checked); choose a new path, compaction never overwrites", dst)
	}
	if err := db.Flush(); err != nil {
		return fmt.Errorf("compact to %s: %w", dst, err)
	}
	out, err := bolt.Open(dst, 0o600, &bolt.Options{Timeout: time.Second, NoFreelistSync: true, FreelistType: bolt.FreelistMapType})
	if err != nil {
		return fmt.Errorf("compact to %s: %w", dst, err)
	}
	err = bolt.Compact(out, db.bolt, 16<<20)
	if cerr := out.Close(); err == nil {
		err = cerr
	}
	if err != nil {
		os.Remove(dst) // our own partial copy, never the source
		return fmt.Errorf("compact to %s: %w", dst, err)
	}
	return nil
}
