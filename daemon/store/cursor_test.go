package store

import (
	"path/filepath"
	"testing"
	"time"
)

// Cursors survive a reopen, are kept per reader, a second SetCursors moves
// only the series it names, and the cursors are no series of their own.
func TestCursorsPersistPerReader(t *testing.T) {
	path := filepath.Join(t.TempDir(), "holdfast.db")
	db, err := Open(path, Options{})
	if err != nil {
		t.Fatal(err)
	}
	t0 := time.Date(2031, 3, 14, 22, 0, 0, 123456789, time.UTC)
	if got, err := db.Cursors("http://central.example.internal/api/v1/write"); err != nil || len(got) != 0 {
		t.Fatalf("cursors of a fresh store: %v, %v; want none", got, err)
	}
	if err := db.SetCursors("a", map[string]time.Time{"cdg": t0, "wall": t0.Add(time.Second)}); err != nil {
		t.Fatal(err)
	}
	if err := db.SetCursors("a", map[string]time.Time{"cdg": t0.Add(time.Minute)}); err != nil {
		t.Fatal(err)
	}
	if err := db.SetCursors("b", map[string]time.Time{"cdg": t0.Add(-time.Hour)}); err != nil {
		t.Fatal(err)
	}
	db.Append("cdg", Point{At: t0, Value: 1})
	if err := db.Close(); err != nil {
		t.Fatal(err)
	}
	ro, err := Open(path, Options{ReadOnly: true})
	if err != nil {
		t.Fatal(err)
	}
	defer ro.Close()
	got, err := ro.Cursors("a")
	if err != nil {
		t.Fatal(err)
	}
	want := map[string]time.Time{"cdg": t0.Add(time.Minute), "wall": t0.Add(time.Second)}
	if len(got) != len(want) {
		t.Fatalf("cursors of a: %v, want %v", got, want)
	}
	for s, w := range want {
		if !got[s].Equal(w) {
			t.Errorf("cursor a/%s = %v, want %v (to the nanosecond)", s, got[s], w)
		}
	}
	if b, _ := ro.Cursors("b"); !b["cdg"].Equal(t0.Add(-time.Hour)) || len(b) != 1 {
		t.Errorf("cursors of b: %v; want cdg alone, an hour before", b)
	}
	if series, _ := ro.Series(); len(series) != 1 || series[0] != "cdg" {
		t.Errorf("series %v; want cdg only (cursors are not series)", series)
	}
	if err := ro.SetCursors("a", want); err == nil {
		t.Error("SetCursors on a read-only store succeeded")
	}
}
