package seriesio

import (
	"bytes"
	"io"
	"math"
	"os"
	"path/filepath"
	"testing"
	"time"

	"holdfast/daemon/store"
)

// benchNight stores 8 h of one invented gauge at hz samples per second
// (3 significant digits, a slow drift), flushed in 10-minute batches.
func benchNight(b *testing.B, hz int) *store.DB {
	b.Helper()
	db, _ := openStore(b)
	n := 8 * 3600 * hz
	step := time.Second / time.Duration(hz)
	for i := range n {
		v := 2e-3 * (1 + 0.5*math.Sin(float64(i)/float64(600*hz)))
		v = math.Round(v*1e6) / 1e6
		db.Append("chamber", store.Point{At: night0.Add(time.Duration(i) * step), Raw: v / 100, Value: v})
		if i%(600*hz) == 0 {
			if err := db.Flush(); err != nil {
				b.Fatal(err)
			}
		}
	}
	if err := db.Flush(); err != nil {
		b.Fatal(err)
	}
	return db
}

// BenchmarkReduceNight: a plot's query, 8 h of one gauge reduced to 1000
// points.
func BenchmarkReduceNight(b *testing.B) {
	for _, hz := range []int{1, 10} {
		b.Run(map[int]string{1: "1Hz", 10: "10Hz"}[hz], func(b *testing.B) {
			db := benchNight(b, hz)
			for b.Loop() {
				pts, err := db.Reduce("chamber", night0, night0.Add(8*time.Hour), 1000)
				if err != nil || len(pts) > 1000 {
					b.Fatal(len(pts), err)
				}
			}
			b.ReportMetric(float64(b.Elapsed().Milliseconds())/float64(b.N), "ms/query")
		})
	}
}

// BenchmarkExportCSV reports samples per second written as CSV.
func BenchmarkExportCSV(b *testing.B) {
	db := benchNight(b, 1)
	e := Export{Series: []string{"chamber"}, From: night0, To: night0.Add(9 * time.Hour), Format: "csv"}
	n := 0
	for b.Loop() {
		k, err := e.Write(io.Discard, db)
		if err != nil {
			b.Fatal(err)
		}
		n += k
	}
	b.ReportMetric(float64(n)/b.Elapsed().Seconds(), "samples/s")
}

// BenchmarkImportCSV reports samples per second imported into a fresh store
// (both passes, the duplicate check and the flushes included).
func BenchmarkImportCSV(b *testing.B) {
	src := benchNight(b, 1)
	var buf bytes.Buffer
	e := Export{Series: []string{"chamber"}, From: night0, To: night0.Add(9 * time.Hour), Format: "csv"}
	if _, err := e.Write(&buf, src); err != nil {
		b.Fatal(err)
	}
	path := filepath.Join(b.TempDir(), "night.csv")
	os.WriteFile(path, buf.Bytes(), 0o600)
	n := 0
	for b.Loop() {
		b.StopTimer()
		db, err := store.Open(filepath.Join(b.TempDir(), "holdfast.db"), store.Options{})
		if err != nil {
			b.Fatal(err)
		}
		b.StartTimer()
		res, err := Import{Name: path}.Run(db, func() (io.ReadCloser, error) { return os.Open(path) })
		if err != nil {
			b.Fatal(err)
		}
		n += res.Stored
		b.StopTimer()
		db.Close()
		b.StartTimer()
	}
	b.ReportMetric(float64(n)/b.Elapsed().Seconds(), "samples/s")
}
