package daemon

import (
	"errors"
	"slices"
	"strings"
	"testing"
	"time"

	"holdfast/daemon/store"
)

// An imported night has no config: the report takes every stored series,
// as pressure unless told otherwise, and refuses a kind for a series the
// directory does not hold.
func TestBareReportConfig(t *testing.T) {
	dir := t.TempDir()
	db, err := store.Open(StorePath(dir), store.Options{})
	if err != nil {
		t.Fatal(err)
	}
	at := time.Date(2026, 3, 2, 1, 0, 0, 0, time.UTC)
	db.Append("oven-tc", store.Point{At: at, Raw: 150, Value: 150})
	db.Append("cdg", store.Point{At: at, Raw: 1e-3, Value: 1e-3})
	if err := errors.Join(db.Flush(), db.Close()); err != nil {
		t.Fatal(err)
	}
	cfg, guessed, err := BareReportConfig(dir, map[string]string{"oven-tc": "temperature"})
	if err != nil {
		t.Fatal(err)
	}
	if !slices.Equal(guessed, []string{"cdg"}) || cfg.Gauges["cdg"].Kind != "pressure" || cfg.Gauges["oven-tc"].Kind != "temperature" {
		t.Errorf("guessed %q, gauges cdg %+v oven-tc %+v; want cdg guessed as pressure, oven-tc temperature", guessed, cfg.Gauges["cdg"], cfg.Gauges["oven-tc"])
	}
	if _, _, err := BareReportConfig(dir, map[string]string{"ovne-tc": "temperature"}); err == nil || !strings.Contains(err.Error(), `no series "ovne-tc"`) {
		t.Errorf("a kind for a series not stored: err %v", err)
	}
	if _, _, err := BareReportConfig(dir, map[string]string{"cdg": "pressur"}); err == nil || !strings.Contains(err.Error(), "want pressure or temperature") {
		t.Errorf("a bad kind: err %v", err)
	}
}
