package store

import (
	"math"
	"os"
	"slices"
	"testing"
	"time"
)

// v1Fixture is a store file written by the version-1 chunk encoder (schema
// 1), before the version-2 format existed; see testdata/README.md.
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

// TestWriteV1Fixture writes the fixture; it ran once with the version-1
// encoder and is kept to show how the file was made. It runs only when
// HOLDFAST_WRITE_V1_FIXTURE names the output file.
func TestWriteV1Fixture(t *testing.T) {
	out := os.Getenv("HOLDFAST_WRITE_V1_FIXTURE")
	if out == "" {
		t.Skip("set HOLDFAST_WRITE_V1_FIXTURE to write the fixture")
	}
	db := openTemp(t, Options{})
	for name, pts := range fixtureSeries() {
		for _, piece := range fixtureFlushes(name, pts) {
			appendAll(db, name, piece)
			if err := db.Flush(); err != nil {
				t.Fatal(err)
			}
		}
	}
	if err := db.Compact(out); err != nil {
		t.Fatal(err)
	}
}

// openFixtureCopy opens a copy of the v1 fixture (the original stays as committed).
func openFixtureCopy(t *testing.T) (*DB, string) {
	t.Helper()
	b, err := os.ReadFile(v1Fixture)
	if err != nil {
		t.Fatal(err)
	}
	path := t.TempDir() + "/copy.db"
	if err := os.WriteFile(path, b, 0o600); err != nil {
		t.Fatal(err)
	}
	db, err := Open(path, Options{})
	if err != nil {
		t.Fatalf("open the v1 fixture: %v", err)
	}
	t.Cleanup(func() { db.Close() })
	return db, path
}

func TestV1FixtureReadsBitForBit(t *testing.T) {
	db, _ := openFixtureCopy(t)
	for name, pts := range fixtureSeries() {
		samePoints(t, all(t, db, name), fixtureWant(name, pts))
	}
}

// sortPoints sorts by time, equal times in their present order.
func sortPoints(pts []Point) {
	slices.SortStableFunc(pts, func(a, b Point) int { return a.At.Compare(b.At) })
}
