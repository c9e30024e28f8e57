package store

import (
	"fmt"
	"math"
	"path/filepath"
	"testing"
	"time"

	bolt "go.etcd.io/bbolt"
)

// chunkBytes sums the stored size of a series' chunks.
func chunkBytes(tb testing.TB, db *DB, series string) int {
	tb.Helper()
	n := 0
	db.Bolt().View(func(tx *bolt.Tx) error {
		return tx.Bucket(bucketSeries).Bucket([]byte(series)).ForEach(func(k, v []byte) error {
			n += len(k) + len(v)
			return nil
		})
	})
	return n
}

// BenchmarkNight stores the invented overnight bake (three gauges, 1 Hz,
// 12 h) and reports bytes per sample: chunk bytes (keys included) per
// gauge, and the whole file after Compact.
func BenchmarkNight(b *testing.B) {
	data := night()
	names := []string{"foreline", "chamber-ion", "heater-tc"}
	for b.Loop() {
		db := openTemp(b, Options{})
		for _, name := range names {
			for i := 0; i < len(data[name]); i += 600 { // flush every 10 min of data to build the file quickly
				appendAll(db, name, data[name][i:min(i+600, len(data[name]))])
				if err := db.Flush(); err != nil {
					b.Fatal(err)
				}
			}
		}
		b.StopTimer()
		total := 0
		for _, name := range names {
			n := chunkBytes(b, db, name)
			total += n
			b.ReportMetric(float64(n)/float64(len(data[name])), name+"-B/sample")
		}
		b.ReportMetric(float64(total)/float64(3*len(data["foreline"])), "chunks-B/sample")
		b.ReportMetric(float64(rollupBytes(b, db, TierMinute))/float64(3*len(data["foreline"])), "minute-B/sample")
		b.ReportMetric(float64(rollupBytes(b, db, TierHour))/float64(3*len(data["foreline"])), "hour-B/sample")
		dst := filepath.Join(b.TempDir(), "compact.db")
		if err := db.Compact(dst); err != nil {
			b.Fatal(err)
		}
		cp, err := bolt.Open(dst, 0o600, &bolt.Options{ReadOnly: true})
		if err != nil {
			b.Fatal(err)
		}
		var used int64 // pages in use: bbolt grows the file itself in doubling steps
		cp.View(func(tx *bolt.Tx) error { used = tx.Size(); return nil })
		cp.Close()
		b.ReportMetric(float64(used)/float64(3*len(data["foreline"])), "pages-B/sample")
		db.Close()
		b.StartTimer()
	}
}

// BenchmarkCodecs reports, for each gauge of both nights, the size in bits
// per sample of each column as stored, with XOR beside for the floats.
func BenchmarkCodecs(b *testing.B) {
	data := night()
	for name, pts := range night8() {
		data[name] = pts
	}
	for _, name := range append([]string{"foreline", "chamber-ion", "heater-tc"}, night8Names...) {
		b.Run(name, func(b *testing.B) {
			pts := data[name]
			var sizes map[string]int
			for b.Loop() {
				sizes = map[string]int{}
				for i := 0; i < len(pts); i += chunkMaxPoints {
					measureColumns(sizes, pts[i:min(i+chunkMaxPoints, len(pts))])
				}
			}
			for k, v := range sizes {
				b.ReportMetric(float64(v)/float64(len(pts)), k+"-bits/sample")
			}
		})
	}
}

// measureColumns adds the bit size of each column of one chunk as the
// store writes it, with the general-purpose XOR coding of the floats beside.
func measureColumns(sizes map[string]int, pts []Point) {
	n := len(pts)
	e := new(encoder)
	e.ns, e.raws, e.vals = make([]int64, n), make([]float64, n), make([]float64, n)
	e.qs, e.cals = make([]uint32, n), make([]uint32, n)
	for i, p := range truncated(pts, DefaultResolution) {
		e.ns[i], e.raws[i], e.vals[i] = p.At.UnixNano(), p.Raw, p.Value
		e.qs[i], e.cals[i] = uint32(p.Quality), p.Calibration
	}
	size := func(key string, enc func(w *bitWriter)) {
		var w bitWriter
		enc(&w)
		sizes[key] += w.bits()
	}
	size("time", func(w *bitWriter) { encodeTimes2(w, e.ns, nil, &e.rc) })
	size("quality+calibration", func(w *bitWriter) { writeRuns(w, e.qs); writeRuns(w, e.cals) })
	size("raw", func(w *bitWriter) { encodeFloats2(w, e.raws, &e.vs.floatScratch) })
	size("raw-xor", func(w *bitWriter) { encodeXOR(w, e.raws, nil) })
	size("value", func(w *bitWriter) { encodeValues2(w, e.vals, e.raws, e.cals, &e.vs) })
	size("value-xor", func(w *bitWriter) { encodeXOR(w, e.vals, nil) })
	sizes["chunk"] += 8 * len(encodeChunk(truncated(pts, DefaultResolution))) // header and checksum included
}

// BenchmarkAppend measures one Append (memory only).
func BenchmarkAppend(b *testing.B) {
	db := openTemp(b, Options{MaxBuffered: math.MaxInt})
	p := Point{At: nightStart, Raw: 1.23e-5, Value: 1.23e-3}
	for b.Loop() {
		p.At = p.At.Add(time.Second)
		db.Append("foreline", p)
	}
}

// BenchmarkAppendParallel measures Append from many pollers at once.
func BenchmarkAppendParallel(b *testing.B) {
	db := openTemp(b, Options{MaxBuffered: math.MaxInt})
	b.RunParallel(func(pb *testing.PB) {
		p := Point{At: nightStart, Raw: 1.23e-5, Value: 1.23e-3}
		for pb.Next() {
			p.At = p.At.Add(time.Second)
			db.Append("foreline", p)
		}
	})
}

// BenchmarkFlushTenGauges is the daemon's steady state: ten gauges, one new
// point each, one Flush, with each open chunk already holding `held` points
// (so the rewrite of the open chunk costs what it does mid-chunk).
func BenchmarkFlushTenGauges(b *testing.B) {
	for _, held := range []int{10, 500, 1000} {
		b.Run(fmt.Sprintf("open-chunk-%d", held), func(b *testing.B) {
			db := openTemp(b, Options{})
			src := make([][]Point, 10)
			for g := range src {
				src[g] = ion(20000)
				appendAll(db, fmt.Sprint("gauge-", g), src[g][:held])
			}
			if err := db.Flush(); err != nil {
				b.Fatal(err)
			}
			i := held
			for b.Loop() {
				if i%chunkMaxPoints == 0 { // stay mid-chunk: skip to the same fill in the next chunk
					i += held
				}
				for g := range src {
					db.Append(fmt.Sprint("gauge-", g), src[g][i%len(src[g])])
				}
				if err := db.Flush(); err != nil {
					b.Fatal(err)
				}
				i++
			}
		})
	}
}

// BenchmarkOpenChunkCPU is the CPU part of a flush for one gauge: decode the
// open chunk, add a point, encode it again (no disk).
func BenchmarkOpenChunkCPU(b *testing.B) {
	for _, held := range []int{10, 500, 1000} {
		b.Run(fmt.Sprintf("open-chunk-%d", held), func(b *testing.B) {
			pts := ion(2000)[600:]
			enc := encodeChunk(pts[:held])
			for b.Loop() {
				old, err := decodeChunk(enc)
				if err != nil {
					b.Fatal(err)
				}
				encodeChunk(append(old, pts[held]))
			}
		})
	}
}

// BenchmarkRange reads a whole night of one gauge and reports points/s.
func BenchmarkRange(b *testing.B) {
	db := openTemp(b, Options{})
	pts := night()["chamber-ion"]
	appendAll(db, "chamber-ion", pts)
	if err := db.Flush(); err != nil {
		b.Fatal(err)
	}
	n := 0
	start := time.Now()
	for b.Loop() {
		db.Range("chamber-ion", minTime, maxTime, func(Point) bool { n++; return true })
	}
	b.ReportMetric(float64(n)/time.Since(start).Seconds(), "points/s")
	if n%len(pts) != 0 {
		b.Fatalf("read %d points, not a multiple of %d", n, len(pts))
	}
}
