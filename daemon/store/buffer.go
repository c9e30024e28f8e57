package store

import (
	"errors"
	"fmt"
	"time"
)

// Stats describes the store's work since Open.
type Stats struct {
	Written      int64         // points committed to disk
	Flushes      int64         // flushes that committed
	FlushErrors  int64         // flushes that failed (their points stayed buffered)
	LastError    error         // the last flush error, nil after a success
	LastFlush    time.Duration // how long the last committed flush took
	Buffered     int           // points waiting in memory now
	Dropped      int64         // oldest buffered points discarded because the buffer was full
	Rejected     int64         // points refused by Append (see its doc)
	LastRejected error         // why the last point was refused
	Damaged      int64         // unreadable chunks moved aside to the damaged-chunks bucket
	FileBytes    int64         // bytes of the file in use after the last flush (bbolt grows the file itself in steps)
}

// Earliest and latest times a Point may carry: those whose nanoseconds since
// 1970 fit in an int64.
var (
	minTime = time.Unix(0, -1<<63)
	maxTime = time.Unix(0, 1<<63-1)
)

// checkPoint says why a point cannot be stored, or returns nil.
func checkPoint(series string, p Point) error {
	switch {
	case series == "":
		return errors.New("point with an empty series name; give each gauge a name")
	case len(series) > 1024:
		return fmt.Errorf("series name of %d bytes is longer than 1024; use a shorter gauge name", len(series))
	case p.At.Before(minTime) || p.At.After(maxTime):
		return fmt.Errorf("series %q: time %s is outside 1678-2262, the range the store keeps; check the clock", series, p.At)
	}
	return nil
}

// Resolution is the step sample times are cut to on Append.
func (db *DB) Resolution() time.Duration { return db.res }

// Append buffers one point for the next Flush. Its time is cut (towards
// the past) to the store's resolution, Options.Resolution, 1 ms by
// default: the part of a poll time below it is jitter, not information,
// and storing it would cost more than the value. It only takes a lock held
// for memory operations, so it never waits for the disk. Points may come in
// any order; they are stored sorted by time, points with equal times in the
// order they were appended. A point with an empty series name, a time outside
// 1678-2262, or appended after Close is refused: Stats counts it in Rejected
// and keeps the reason in LastRejected. When the buffer is full (the disk
// refuses writes for a long time) the oldest point is dropped and counted.
func (db *DB) Append(series string, p Point) {
	if db.res > 1 {
		p.At = p.At.Truncate(db.res) // whole seconds are multiples of res, so this counts from 1970 too
	}
	err := checkPoint(series, p) // after the cut, which may take a time out of the range
	db.mu.Lock()
	defer db.mu.Unlock()
	if err == nil && db.closed {
		err = fmt.Errorf("series %q: point appended after the store was closed", series)
	}
	if err == nil && db.readOnly {
		err = fmt.Errorf("series %q: point appended to a store opened read-only", series)
	}
	if err != nil {
		db.stats.Rejected++
		db.stats.LastRejected = err
		return
	}
	db.buf = append(db.buf, pending{series, p})
	db.trimLocked()
}

// trimLocked drops the oldest buffered points beyond the bound.
func (db *DB) trimLocked() {
	if over := len(db.buf) - db.maxBuf; over > 0 {
		clear(db.buf[:over])
		db.buf = db.buf[over:]
		db.stats.Dropped += int64(over)
	}
}

// take removes and returns everything buffered.
func (db *DB) take() ([]pending, error) {
	db.mu.Lock()
	defer db.mu.Unlock()
	if db.closed {
		return nil, ErrClosed
	}
	b := db.buf
	db.buf = nil
	return b, nil
}

// giveBack puts points whose flush failed back in front of newer ones.
func (db *DB) giveBack(b []pending) {
	db.mu.Lock()
	defer db.mu.Unlock()
	db.buf = append(b, db.buf...)
	db.trimLocked()
}

// buffered returns copies of the buffered points of one series.
func (db *DB) buffered(series string) []Point {
	db.mu.Lock()
	defer db.mu.Unlock()
	var out []Point
	for _, e := range db.buf {
		if e.series == series {
			out = append(out, e.p)
		}
	}
	return out
}

// Stats returns a snapshot of the counters.
func (db *DB) Stats() Stats {
	db.mu.Lock()
	defer db.mu.Unlock()
	s := db.stats
	s.Buffered = len(db.buf)
	return s
}
