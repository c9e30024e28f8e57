package store

import (
	"bytes"
	"errors"
	"os"
	"path/filepath"
	"strings"
	"testing"
	"time"

	bolt "go.etcd.io/bbolt"
)

// seconds returns n points one second apart from nightStart, Raw = index.
func seconds(n int) []Point {
	pts := make([]Point, n)
	for i := range pts {
		pts[i] = Point{At: nightStart.Add(time.Duration(i) * time.Second), Raw: float64(i), Value: float64(i) * 100}
	}
	return pts
}

// storeFlushed opens a store holding pts in series g, flushed.
func storeFlushed(t *testing.T, pts []Point) *DB {
	t.Helper()
	db := openTemp(t, Options{})
	appendAll(db, "g", pts)
	if err := db.Flush(); err != nil {
		t.Fatal(err)
	}
	return db
}

// damage rewrites the stored chunk of series g that starts at start.
func damage(t *testing.T, db *DB, start time.Time, how func([]byte) []byte) []byte {
	t.Helper()
	var bad []byte
	err := db.Bolt().Update(func(tx *bolt.Tx) error {
		b := tx.Bucket(bucketSeries).Bucket([]byte("g"))
		k := chunkKey(start.UnixNano())
		v := b.Get(k)
		if v == nil {
			t.Fatalf("no chunk starts at %s", start)
		}
		bad = how(bytes.Clone(v))
		return b.Put(k, bad)
	})
	if err != nil {
		t.Fatal(err)
	}
	return bad
}

func TestDamagedChunkIsReportedAndOthersStayReadable(t *testing.T) {
	pts := seconds(3000) // chunks start at 0, 1024 and 2048 s
	cases := []struct {
		name string
		how  func([]byte) []byte
		want string
	}{
		{"bit flip", func(b []byte) []byte { b[len(b)/2] ^= 0x10; return b }, "checksum mismatch"},
		{"torn", func(b []byte) []byte { return b[:len(b)/3] }, "checksum mismatch"},
		{"empty", func(b []byte) []byte { return []byte{} }, "too short"},
		{"newer format", func(b []byte) []byte { b[0] = 3; return b }, "version 3"},
	}
	mid := pts[1024].At
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			db := storeFlushed(t, pts)
			damage(t, db, mid, c.how)
			var got []Point
			err := db.Range("g", minTime, maxTime, func(p Point) bool { got = append(got, p); return true })
			var ce *ChunkError
			if !errors.As(err, &ce) || ce.Series != "g" || !ce.Start.Equal(mid) || !strings.Contains(err.Error(), c.want) {
				t.Fatalf("Range error: %v; want a ChunkError for g at %s saying %q", err, mid, c.want)
			}
			if !strings.Contains(err.Error(), `series "g"`) || !strings.Contains(err.Error(), "2031-03-14T22:17:04Z") {
				t.Errorf("error does not name the series and chunk time: %v", err)
			}
			samePoints(t, got, append(pts[:1024:1024], pts[2048:]...))
			if n, err := db.Count("g"); n != 3000-1024 || !errors.As(err, &ce) {
				t.Errorf("Count = %d, %v", n, err)
			}
		})
	}
}

func TestFlushMovesADamagedOpenChunkAside(t *testing.T) {
	// 1200 points: a full chunk and a block of 176 at the open end. The block
	// is damaged; appending 900 more makes the run full, so the flush merges
	// it, cannot decode it, and must keep going.
	pts := seconds(2100)
	db := storeFlushed(t, pts[:1200])
	bad := damage(t, db, pts[1024].At, func(b []byte) []byte { b[len(b)-1] ^= 1; return b })
	appendAll(db, "g", pts[1200:])
	if err := db.Flush(); err != nil {
		t.Fatalf("Flush with a damaged open chunk: %v", err)
	}
	if s := db.Stats(); s.Damaged != 1 {
		t.Fatalf("Stats.Damaged = %d, want 1", s.Damaged)
	}
	samePoints(t, all(t, db, "g"), append(pts[:1024:1024], pts[1200:]...))
	var kept [][]byte // the damaged bytes are kept verbatim
	db.Bolt().View(func(tx *bolt.Tx) error {
		return tx.Bucket(bucketDamaged).Bucket([]byte("g")).ForEach(func(k, v []byte) error {
			kept = append(kept, bytes.Clone(v))
			return nil
		})
	})
	if len(kept) != 1 || !bytes.Equal(kept[0], bad) {
		t.Fatalf("damaged-chunks bucket holds %d chunks; want the one damaged chunk byte for byte", len(kept))
	}
}

func TestRewriteAppliesANewCalibration(t *testing.T) {
	pts := truncated(ion(4*3600), DefaultResolution)
	db := storeFlushed(t, pts)
	from, to := nightStart.Add(time.Hour), nightStart.Add(3*time.Hour)
	recal := func(p Point) Point {
		if p.Quality == 0 {
			p.Value, p.Calibration = p.Raw*100*0.91, 8
		}
		return p
	}
	n, err := db.Rewrite("g", from, to, recal)
	if err != nil {
		t.Fatal(err)
	}
	want, inRange := make([]Point, len(pts)), 0
	for i, p := range pts {
		want[i] = p
		if !p.At.Before(from) && p.At.Before(to) {
			want[i] = recal(p)
			inRange++
		}
	}
	if n != inRange {
		t.Errorf("Rewrite returned %d, want %d points in range", n, inRange)
	}
	samePoints(t, all(t, db, "g"), want)

	_, err = db.Rewrite("g", from, to, func(p Point) Point { p.At = p.At.Add(time.Second); return p })
	if err == nil || !strings.Contains(err.Error(), "only Raw, Value, Quality and Calibration may change") {
		t.Fatalf("Rewrite moving times: %v", err)
	}
	samePoints(t, all(t, db, "g"), want) // nothing changed
}

func TestRewriteRetriesAChunkAFlushChangedMeanwhile(t *testing.T) {
	pts := seconds(1500)
	db := storeFlushed(t, pts)
	late := Point{At: nightStart.Add(1500 * time.Second), Raw: 1500}
	calls := 0
	n, err := db.Rewrite("g", minTime, maxTime, func(p Point) Point {
		if calls++; calls == 1 { // a poller appends and the daemon flushes mid-rewrite
			db.Append("g", late)
			if err := db.Flush(); err != nil {
				t.Error(err)
			}
		}
		p.Value = -p.Raw
		return p
	})
	if err != nil || n != 1501 {
		t.Fatalf("Rewrite = %d, %v; want 1501 points", n, err)
	}
	for _, p := range all(t, db, "g") {
		if p.Value != -p.Raw {
			t.Fatalf("point at %s not rewritten: %+v", p.At, p)
		}
	}
}

func TestDeleteBeforeDropsWholeChunksOnly(t *testing.T) {
	pts := seconds(3000)
	db := storeFlushed(t, pts)
	n, err := db.DeleteBefore("g", pts[1500].At)
	if err != nil || n != 1024 {
		t.Fatalf("DeleteBefore = %d, %v; want the first chunk's 1024 points", n, err)
	}
	samePoints(t, all(t, db, "g"), pts[1024:])
	if n, err := db.DeleteBefore("g", pts[2048].At); err != nil || n != 1024 {
		t.Fatalf("DeleteBefore at a chunk boundary = %d, %v", n, err)
	}
	if n, err := db.DeleteBefore("nothing-here", nightStart); err != nil || n != 0 {
		t.Fatalf("DeleteBefore on a missing series = %d, %v", n, err)
	}
}

func TestCompactWritesASmallerCopyWithEverything(t *testing.T) {
	db := storeFlushed(t, night()["foreline"])
	db.Bolt().Update(func(tx *bolt.Tx) error { // a bucket of the daemon's
		b, _ := tx.CreateBucket([]byte("calibrations"))
		return b.Put([]byte("7"), []byte("gas factor 0.83"))
	})
	if _, err := db.DeleteBefore("g", nightStart.Add(10*time.Hour)); err != nil {
		t.Fatal(err)
	}
	dst := filepath.Join(t.TempDir(), "compact.db")
	if err := db.Compact(dst); err != nil {
		t.Fatal(err)
	}
	if err := db.Compact(dst); err == nil || !strings.Contains(err.Error(), "never overwrites") {
		t.Fatalf("second Compact to the same file: %v", err)
	}
	src, _ := os.Stat(db.Path())
	out, _ := os.Stat(dst)
	if out.Size() >= src.Size() {
		t.Errorf("compacted copy is %d bytes, source %d", out.Size(), src.Size())
	}
	cp, err := Open(dst, Options{ReadOnly: true})
	if err != nil {
		t.Fatal(err)
	}
	defer cp.Close()
	samePoints(t, all(t, cp, "g"), all(t, db, "g"))
	cp.Bolt().View(func(tx *bolt.Tx) error {
		if v := tx.Bucket([]byte("calibrations")).Get([]byte("7")); string(v) != "gas factor 0.83" {
			t.Errorf("daemon bucket not copied: %q", v)
		}
		return nil
	})
}

// chunkSizes lists the point counts of series g's chunks in key order.
func chunkSizes(t *testing.T, db *DB) []int {
	t.Helper()
	var n []int
	db.Bolt().View(func(tx *bolt.Tx) error {
		return tx.Bucket(bucketSeries).Bucket([]byte("g")).ForEach(func(k, v []byte) error {
			h, err := readHead(v)
			if err != nil {
				t.Fatal(err)
			}
			n = append(n, h.n)
			return nil
		})
	})
	return n
}

func TestSmallFlushesAreMergedIntoFullChunks(t *testing.T) {
	path := filepath.Join(t.TempDir(), "blocks.db")
	pts := seconds(2100)
	db, err := Open(path, Options{})
	if err != nil {
		t.Fatal(err)
	}
	for i := 0; i < len(pts); i += 10 {
		if i == 700 { // a restart mid-run: the new process finds the blocks on disk
			if err := db.Close(); err != nil {
				t.Fatal(err)
			}
			if db, err = Open(path, Options{}); err != nil {
				t.Fatal(err)
			}
		}
		appendAll(db, "g", pts[i:i+10])
		if err := db.Flush(); err != nil {
			t.Fatal(err)
		}
	}
	defer db.Close()
	sizes := chunkSizes(t, db)
	if len(sizes) < 3 || sizes[0] != 1024 || sizes[1] != 1024 {
		t.Fatalf("chunk sizes %v; want two full chunks of 1024, then blocks of the last 52 points", sizes)
	}
	rest := 0
	for _, n := range sizes[2:] {
		rest += n
	}
	if rest != 52 {
		t.Fatalf("chunk sizes %v: %d points after the full chunks, want 52", sizes, rest)
	}
	samePoints(t, all(t, db, "g"), pts)
}
