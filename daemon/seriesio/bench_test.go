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
func benchNight(b *testing.B, hz int) *store.DB { return benchSpan(b, hz, 8*time.Hour) }

// benchSpan stores span of one invented gauge at hz samples per second,
// as benchNight does.
func benchSpan(b *testing.B, hz int, span time.Duration) *store.DB {
	b.Helper()
	db, _ := openStore(b)
	n := int(span/time.Second) * hz
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
// points (buckets of 87 s: read from the minute roll-ups), warm (the same
// query again and again, the file's pages in memory), through Query as
// GET /api/v1/series runs it.
func BenchmarkReduceNight(b *testing.B) {
	for _, hz := range []int{1, 10} {
		b.Run(map[int]string{1: "1Hz", 10: "10Hz"}[hz], func(b *testing.B) {
			benchQuery(b, benchNight(b, hz), 8*time.Hour)
		})
	}
}

// BenchmarkReduceMonth: 30 days of one gauge at 1 Hz (2.6 million
// samples) reduced to 1000 points (buckets of 2.2 h: the hour roll-ups).
func BenchmarkReduceMonth(b *testing.B) {
	benchQuery(b, benchSpan(b, 1, 30*24*time.Hour), 30*24*time.Hour)
}

// benchQuery runs the query of span from night0 and reports ms/query and
// what it read.
func benchQuery(b *testing.B, db *store.DB, span time.Duration) {
	q := Query{Series: []string{"chamber"}, From: night0, To: night0.Add(span), Points: 1000}
	var res QueryResult
	for b.Loop() {
		var err error
		if res, err = q.Run(db); err != nil || len(res.Series[0].Samples) > 1100 {
			b.Fatal(err)
		}
	}
	b.ReportMetric(float64(b.Elapsed().Microseconds())/1e3/float64(b.N), "ms/query")
	b.ReportMetric(float64(res.Series[0].Stored), "samples")
	b.Logf("resolution %s, %d entries", res.Series[0].Resolution, len(res.Series[0].Samples))
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
