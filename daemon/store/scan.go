package store

import (
	"errors"
	"time"

	bolt "go.etcd.io/bbolt"
)

// scanBatch bounds the chunks one step of Scan copies out of the file
// (about 64·1024 points).
const scanBatch = 64

// Scan calls fn for each point of series with from ≤ At < to, in time order,
// until fn returns false, as Range does, but in steps of at most 64 chunks:
// memory stays bounded by one step whatever the span, so an export or a
// reduced query over a month holds no more than an hour's chunks at once.
// Each step is a Range over its own slice of time, so a Flush between steps
// neither repeats nor drops a point; points appended to a step already done
// are not seen. Unreadable chunks are skipped and reported as *ChunkError
// after the others.
func (db *DB) Scan(series string, from, to time.Time, fn func(Point) bool) error {
	lo, hi := clampNano(from), clampNano(to)
	var errs []error
	for lo < hi {
		end, err := db.stepEnd(series, lo, hi)
		if err != nil {
			return errors.Join(append(errs, err)...)
		}
		more := true
		err = db.Range(series, time.Unix(0, lo), time.Unix(0, end), func(p Point) bool {
			more = fn(p)
			return more
		})
		var ce *ChunkError
		if err != nil && !errors.As(err, &ce) {
			return errors.Join(append(errs, err)...)
		}
		if err != nil {
			errs = append(errs, err)
		}
		if !more {
			break
		}
		lo = end
	}
	return errors.Join(errs...)
}

// stepEnd returns where Scan's step starting at lo ends: the start of the
// scanBatch-th chunk after the one covering lo, or hi.
func (db *DB) stepEnd(series string, lo, hi int64) (int64, error) {
	if db.isClosed() {
		return 0, ErrClosed
	}
	end := hi
	err := db.bolt.View(func(tx *bolt.Tx) error {
		b := tx.Bucket(bucketSeries).Bucket([]byte(series))
		if b == nil {
			return nil
		}
		c := b.Cursor()
		n := 0
		for k, _ := seekCovering(c, lo); k != nil; k, _ = c.Next() {
			kt, ok := keyTime(k)
			if !ok {
				continue
			}
			if kt >= hi {
				return nil
			}
			if n == scanBatch && kt > lo {
				end = kt
				return nil
			}
			n++
		}
		return nil
	})
	return end, err
}

// IsLocked reports whether err is Open's failure on a file another process
// holds (a running daemon), so a command can ask that daemon instead.
func IsLocked(err error) bool {
	var le *lockedError
	return errors.As(err, &le)
}
