package store

import (
	"bytes"
	"encoding/binary"
	"errors"
	"log/slog"
	"math"
	"os"
	"path/filepath"
	"slices"
	"strings"
	"testing"
	"time"

	bolt "go.etcd.io/bbolt"
)

// v1Fixture is a store file written by the version-1 chunk encoder (schema
// 1) through Append and Flush, before the version-2 format existed; see
// testdata/README.md.
const v1Fixture = "testdata/schema1.db"

// fixtureSeries returns the points the fixture holds, per series: gauges at
// 1 Hz with nanosecond jitter, special floats, and late and duplicate times.
func fixtureSeries() map[string][]Point {
	special := make([]Point, 0, len(specials)*2)
	t0 := time.Date(2031, 5, 6, 22, 0, 0, 123456789, time.UTC)
	for i, v := range specials {
		at := t0.Add(time.Duration(i) * 1500 * time.Millisecond)
		special = append(special, Point{At: at, Raw: v, Value: -v, Quality: uint8(i % 3), Calibration: uint32(i % 2)},
			Point{At: at, Raw: v, Value: math.Copysign(0, -1), Calibration: 9}) // duplicate time
	}
	return map[string][]Point{
		"chamber-ion": ion(2500),
		"heater-tc":   thermocouple(1800),
		"specials":    special,
	}
}

// fixtureFlushes cuts a fixture series into the pieces flushed one by one:
// 37 points each (so the file holds full chunks, open-end blocks and merges),
// the specials from the end, so each flush is older than the last.
func fixtureFlushes(name string, pts []Point) [][]Point {
	var out [][]Point
	for j := 0; j < len(pts); j += 37 {
		i := j
		if name == "specials" {
			i = len(pts) - 37 - j
		}
		out = append(out, pts[max(i, 0):min(i+37, len(pts))])
	}
	return out
}

// fixtureWant is what reading a fixture series gives: its points in flush
// order, sorted by time with equal times in the order they were appended.
func fixtureWant(name string, pts []Point) []Point {
	var want []Point
	for _, piece := range fixtureFlushes(name, pts) {
		want = append(want, piece...)
	}
	sortPoints(want)
	return want
}

// copyFixture copies the v1 fixture to a temporary file (the committed
// file is never opened for writing) and returns its path.
func copyFixture(t *testing.T) string {
	t.Helper()
	b, err := os.ReadFile(v1Fixture)
	if err != nil {
		t.Fatal(err)
	}
	path := filepath.Join(t.TempDir(), "copy.db")
	if err := os.WriteFile(path, b, 0o600); err != nil {
		t.Fatal(err)
	}
	return path
}

// fileFormat returns a store file's schema and how many chunks it holds of each version.
func fileFormat(t *testing.T, path string) (uint64, map[byte]int) {
	t.Helper()
	b, err := bolt.Open(path, 0o600, &bolt.Options{ReadOnly: true})
	if err != nil {
		t.Fatal(err)
	}
	defer b.Close()
	versions := map[byte]int{}
	var schema uint64
	b.View(func(tx *bolt.Tx) error {
		schema, _ = binary.Uvarint(tx.Bucket(bucketMeta).Get(keySchema))
		return tx.Bucket(bucketSeries).ForEachBucket(func(k []byte) error {
			return tx.Bucket(bucketSeries).Bucket(k).ForEach(func(_, v []byte) error {
				versions[v[0]]++
				return nil
			})
		})
	})
	return schema, versions
}

// checkFixturePoints fails unless db holds the fixture's points bit for bit.
func checkFixturePoints(t *testing.T, db *DB) {
	t.Helper()
	for name, pts := range fixtureSeries() {
		want := fixtureWant(name, pts)
		samePoints(t, all(t, db, name), want)
		if n, err := db.Count(name); err != nil || n != len(want) {
			t.Errorf("Count(%q) = %d, %v; want %d", name, n, err, len(want))
		}
	}
}

func TestV1FixtureReadsBeforeMigration(t *testing.T) {
	path := copyFixture(t)
	if schema, v := fileFormat(t, path); schema != 1 || v[2] != 0 || v[1] == 0 {
		t.Fatalf("fixture: schema %d, chunk versions %v; want schema 1 and version-1 chunks only", schema, v)
	}
	db, err := Open(path, Options{ReadOnly: true}) // read-only: read as it is, no migration
	if err != nil {
		t.Fatal(err)
	}
	checkFixturePoints(t, db)
	db.Close()
	if schema, v := fileFormat(t, path); schema != 1 || v[2] != 0 {
		t.Fatalf("after a read-only open: schema %d, chunk versions %v; want it untouched", schema, v)
	}
}

func TestV1FixtureMigratesBitForBit(t *testing.T) {
	path := copyFixture(t)
	var logged bytes.Buffer
	db, err := Open(path, Options{Logger: slog.New(slog.NewTextHandler(&logged, nil))})
	if err != nil {
		t.Fatalf("open the v1 fixture: %v", err)
	}
	checkFixturePoints(t, db) // nanosecond times too: a migrated chunk keeps its own time unit
	if !strings.Contains(logged.String(), "store schema migration done") {
		t.Errorf("no log line for the migration; log:\n%s", logged.String())
	}
	more := Point{At: time.Date(2031, 5, 7, 1, 0, 0, 0, time.UTC), Raw: 1.5e-7, Value: 1.5e-5}
	db.Append("chamber-ion", more) // and the migrated file takes new points
	if err := db.Close(); err != nil {
		t.Fatal(err)
	}
	schema, v := fileFormat(t, path)
	if schema != schemaVersion || v[1] != 0 || v[2] == 0 {
		t.Fatalf("after migration: schema %d, chunk versions %v; want schema %d and version-2 chunks only", schema, v, schemaVersion)
	}
	logged.Reset()
	db, err = Open(path, Options{Logger: slog.New(slog.NewTextHandler(&logged, nil))})
	if err != nil {
		t.Fatal(err)
	}
	defer db.Close()
	if strings.Contains(logged.String(), "migration") {
		t.Errorf("a migrated file was migrated again; log:\n%s", logged.String())
	}
	got := all(t, db, "chamber-ion")
	if !sameBits(got[len(got)-1], more) {
		t.Errorf("last point %+v, want %+v", got[len(got)-1], more)
	}
	samePoints(t, got[:len(got)-1], fixtureWant("chamber-ion", fixtureSeries()["chamber-ion"]))
}

func TestMigrationFinishesAHalfMigratedFile(t *testing.T) {
	// As left by a migration cut short: schema 1, chunks of both versions,
	// and one damaged version-1 chunk, which must stay as it is.
	path := filepath.Join(t.TempDir(), "half.db")
	db, err := Open(path, Options{Resolution: time.Nanosecond})
	if err != nil {
		t.Fatal(err)
	}
	pts := ion(5000)
	parts := splitChunks(pts)
	var damaged []byte
	err = db.Bolt().Update(func(tx *bolt.Tx) error {
		b, err := tx.Bucket(bucketSeries).CreateBucket([]byte("g"))
		if err != nil {
			return err
		}
		for i, part := range parts {
			enc := encodeChunk(part)
			if i%2 == 0 {
				enc = encodeChunk1(part)
			}
			if i == 2 {
				enc[len(enc)-1] ^= 0xff
				damaged = slices.Clone(enc)
			}
			if err := b.Put(chunkKey(part[0].At.UnixNano()), enc); err != nil {
				return err
			}
		}
		return tx.Bucket(bucketMeta).Put(keySchema, []byte{1})
	})
	if err != nil {
		t.Fatal(err)
	}
	db.Close()
	db, err = Open(path, Options{})
	if err != nil {
		t.Fatal(err)
	}
	var got []Point
	err = db.Range("g", minTime, maxTime, func(p Point) bool { got = append(got, p); return true })
	var ce *ChunkError
	if !errors.As(err, &ce) || !ce.Start.Equal(parts[2][0].At) {
		t.Fatalf("Range error %v; want the damaged chunk at %s reported", err, parts[2][0].At)
	}
	want := slices.Concat(append(parts[:2:2], parts[3:]...)...)
	samePoints(t, got, want)
	db.Close()
	schema, v := fileFormat(t, path)
	if schema != schemaVersion || v[1] != 1 {
		t.Fatalf("schema %d, chunk versions %v; want schema %d and only the damaged chunk left at version 1", schema, v, schemaVersion)
	}
	b, _ := bolt.Open(path, 0o600, &bolt.Options{ReadOnly: true})
	defer b.Close()
	b.View(func(tx *bolt.Tx) error {
		if got := tx.Bucket(bucketSeries).Bucket([]byte("g")).Get(chunkKey(parts[2][0].At.UnixNano())); !bytes.Equal(got, damaged) {
			t.Error("the damaged chunk was changed")
		}
		return nil
	})
}

// sortPoints sorts by time, equal times in their present order.
func sortPoints(pts []Point) {
	slices.SortStableFunc(pts, func(a, b Point) int { return a.At.Compare(b.At) })
}
