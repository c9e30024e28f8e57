package store

import (
	"errors"
	"math/rand/v2"
	"path/filepath"
	"strings"
	"testing"
	"time"

	bolt "go.etcd.io/bbolt"
	berrors "go.etcd.io/bbolt/errors"
)

// noisy returns points that compress badly (random bits), to fill a file fast.
func noisy(rng *rand.Rand, from, n int) []Point {
	pts := make([]Point, n)
	for i := range pts {
		pts[i] = Point{At: nightStart.Add(time.Duration(from+i) * time.Second), Raw: rng.Float64(), Value: rng.NormFloat64()}
	}
	return pts
}

func TestFullFileKeepsPointsBufferedAndStoredOnesReadable(t *testing.T) {
	// The file may not grow past 256 KiB: a stand-in for a full disk.
	path := filepath.Join(t.TempDir(), "full.db")
	db, err := Open(path, Options{MaxBytes: 256 << 10})
	if err != nil {
		t.Fatal(err)
	}
	rng := rand.New(rand.NewPCG(7, 7))
	var failed error
	var flushed []Point
	for i := 0; failed == nil; i++ {
		if i > 1000 {
			t.Fatal("the file never filled up")
		}
		batch := noisy(rng, len(flushed), 500)
		appendAll(db, "g", batch)
		if failed = db.Flush(); failed == nil {
			flushed = append(flushed, batch...)
		}
	}
	if !errors.Is(failed, berrors.ErrMaxSizeReached) || !strings.Contains(failed.Error(), path) {
		t.Fatalf("Flush failed with %v, want the size limit and the file named", failed)
	}
	if s := db.Stats(); s.FlushErrors != 1 || s.Buffered != 500 || s.LastError == nil || s.Written != int64(len(flushed)) {
		t.Fatalf("after the failed flush: %+v", s)
	}
	if got := all(t, db, "g"); len(got) != len(flushed)+500 { // buffered points are still visible
		t.Fatalf("Range sees %d points, want %d", len(got), len(flushed)+500)
	}
	// Close flushes once more. A few hundred points might fit in pages the
	// failed transaction left free, so buffer more than the whole 256 KiB
	// file could hold (20000 random points, some 16 bytes each) before it.
	appendAll(db, "g", noisy(rng, len(flushed)+500, 20000))
	err = db.Close()
	if err == nil || !strings.Contains(err.Error(), "20500 buffered points not written") {
		t.Fatalf("Close: got %v, want it to say how many points were lost", err)
	}
	db, err = Open(path, Options{ReadOnly: true}) // what was flushed is intact
	if err != nil {
		t.Fatal(err)
	}
	defer db.Close()
	samePoints(t, all(t, db, "g"), flushed)
}

func TestFailedFlushKeepsPointsForTheNextOne(t *testing.T) {
	path := filepath.Join(t.TempDir(), "flaky.db")
	db, err := Open(path, Options{})
	if err != nil {
		t.Fatal(err)
	}
	defer func() { db.Close() }()
	pts := noisy(rand.New(rand.NewPCG(2, 2)), 0, 300)
	appendAll(db, "g", pts[:100])
	if err := db.Flush(); err != nil {
		t.Fatal(err)
	}
	db.bolt.Close() // the file goes away underneath
	appendAll(db, "g", pts[100:200])
	if err := db.Flush(); !errors.Is(err, berrors.ErrDatabaseNotOpen) {
		t.Fatalf("Flush on a closed file: %v", err)
	}
	appendAll(db, "g", pts[200:])
	if s := db.Stats(); s.Buffered != 200 || s.FlushErrors != 1 {
		t.Fatalf("Stats: %+v", s)
	}
	if db.bolt, err = bolt.Open(path, 0o600, nil); err != nil { // the file comes back
		t.Fatal(err)
	}
	if err := db.Flush(); err != nil {
		t.Fatalf("Flush after recovery: %v", err)
	}
	if s := db.Stats(); s.Buffered != 0 || s.Written != 300 || s.LastError != nil || s.Dropped != 0 {
		t.Fatalf("Stats after recovery: %+v", s)
	}
	samePoints(t, all(t, db, "g"), pts)
}

func TestBufferBoundDropsOldestAndCounts(t *testing.T) {
	db := openTemp(t, Options{MaxBuffered: 100})
	db.Bolt().Close() // the file goes away underneath: every Flush fails
	pts := noisy(rand.New(rand.NewPCG(1, 1)), 0, 250)
	appendAll(db, "g", pts[:150])
	if err := db.Flush(); !errors.Is(err, berrors.ErrDatabaseNotOpen) {
		t.Fatalf("Flush on a closed file: %v", err)
	}
	appendAll(db, "g", pts[150:])
	if err := db.Flush(); err == nil {
		t.Fatal("Flush succeeded on a closed file")
	}
	s := db.Stats()
	if s.Dropped != 150 || s.Buffered != 100 || s.FlushErrors != 2 {
		t.Fatalf("Stats: %+v", s)
	}
	samePoints(t, db.buffered("g"), pts[150:]) // the newest are the ones kept
}
