package store

import (
	"errors"
	"slices"
	"time"

	bolt "go.etcd.io/bbolt"
)

// A rawChunk is a chunk's key time and a copy of its bytes, read out of a
// transaction so decoding and callbacks run with no transaction open.
type rawChunk struct {
	start int64
	data  []byte
}

// snapshot copies the chunks of series that may hold points in [from, to)
// and the series' buffered points, consistently: no Flush runs in between.
func (db *DB) snapshot(series string, from, to int64) ([]rawChunk, []Point, error) {
	db.flushMu.Lock()
	defer db.flushMu.Unlock()
	if db.isClosed() {
		return nil, nil, ErrClosed
	}
	var chunks []rawChunk
	err := db.bolt.View(func(tx *bolt.Tx) error {
		b := tx.Bucket(bucketSeries).Bucket([]byte(series))
		if b == nil {
			return nil
		}
		c := b.Cursor()
		for k, v := seekCovering(c, from); k != nil; k, v = c.Next() {
			kt, ok := keyTime(k)
			if !ok || v == nil {
				continue
			}
			if kt >= to {
				break
			}
			chunks = append(chunks, rawChunk{kt, slices.Clone(v)})
		}
		return nil
	})
	return chunks, db.buffered(series), err
}

// isClosed reports whether Close has run.
func (db *DB) isClosed() bool {
	db.mu.Lock()
	defer db.mu.Unlock()
	return db.closed
}

// Range calls fn for each point of series with from ≤ At < to, in time
// order (equal times in append order), including points not yet flushed,
// until fn returns false. No transaction is open while fn runs, so fn may
// call any method of db. A chunk that cannot be decoded is skipped and
// reported in the returned error as a *ChunkError; the other chunks are
// still read.
func (db *DB) Range(series string, from, to time.Time, fn func(Point) bool) error {
	lo, hi := clampNano(from), clampNano(to)
	chunks, buf, err := db.snapshot(series, lo, hi)
	if err != nil {
		return err
	}
	buf = slices.DeleteFunc(buf, func(p Point) bool { n := p.At.UnixNano(); return n < lo || n >= hi })
	slices.SortStableFunc(buf, func(a, b Point) int { return a.At.Compare(b.At) })
	var errs []error
	var pts []Point // reused from chunk to chunk
	for _, rc := range chunks {
		pts, err = appendChunk(pts[:0], rc.data)
		if err != nil {
			errs = append(errs, &ChunkError{Series: series, Start: time.Unix(0, rc.start).UTC(), Err: err})
			continue
		}
		for _, p := range pts {
			if n := p.At.UnixNano(); n < lo || n >= hi {
				continue
			}
			for len(buf) > 0 && buf[0].At.Before(p.At) {
				if !fn(buf[0]) {
					return errors.Join(errs...)
				}
				buf = buf[1:]
			}
			if !fn(p) {
				return errors.Join(errs...)
			}
		}
	}
	for _, p := range buf {
		if !fn(p) {
			break
		}
	}
	return errors.Join(errs...)
}

// clampNano converts t to ns since 1970, saturating outside 1678-2262.
func clampNano(t time.Time) int64 {
	switch {
	case t.Before(minTime):
		return -1 << 63
	case t.After(maxTime):
		return 1<<63 - 1
	}
	return t.UnixNano()
}

// Count returns the number of points in series, buffered ones included. It
// reads chunk headers only. Unreadable chunks are left out of the count and
// reported as *ChunkError.
func (db *DB) Count(series string) (int, error) {
	db.flushMu.Lock()
	defer db.flushMu.Unlock()
	if db.isClosed() {
		return 0, ErrClosed
	}
	n := len(db.buffered(series))
	var errs []error
	err := db.bolt.View(func(tx *bolt.Tx) error {
		b := tx.Bucket(bucketSeries).Bucket([]byte(series))
		if b == nil {
			return nil
		}
		return b.ForEach(func(k, v []byte) error {
			kt, ok := keyTime(k)
			if !ok || v == nil {
				return nil
			}
			h, err := readHead(v)
			if err != nil {
				errs = append(errs, &ChunkError{Series: series, Start: time.Unix(0, kt).UTC(), Err: err})
				return nil
			}
			n += h.n
			return nil
		})
	})
	return n, errors.Join(append(errs, err)...)
}

// Series returns the names of all series, stored or buffered, sorted.
func (db *DB) Series() ([]string, error) {
	db.flushMu.Lock()
	defer db.flushMu.Unlock()
	if db.isClosed() {
		return nil, ErrClosed
	}
	var names []string
	err := db.bolt.View(func(tx *bolt.Tx) error {
		return tx.Bucket(bucketSeries).ForEachBucket(func(k []byte) error {
			names = append(names, string(k))
			return nil
		})
	})
	db.mu.Lock()
	for _, e := range db.buf {
		names = append(names, e.series)
	}
	db.mu.Unlock()
	slices.Sort(names)
	return slices.Compact(names), err
}
