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

// BenchmarkCodecs reports, for each gauge of the night, the size in bits per
// sample of each column under each candidate codec, so the choice the
// encoder makes per chunk can be checked against the alternatives.
func BenchmarkCodecs(b *testing.B) {
	data := night()
	for _, name := range []string{"foreline", "chamber-ion", "heater-tc"} {
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

// measureColumns adds the bit size of each codec on each column of one chunk.
func measureColumns(sizes map[string]int, pts []Point) {
	n := len(pts)
	ns, raws, vals, cals := make([]int64, n), make([]float64, n), make([]float64, n), make([]uint32, n)
	for i, p := range pts {
		ns[i], raws[i], vals[i], cals[i] = p.At.UnixNano(), p.Raw, p.Value, p.Calibration
	}
	size := func(key string, enc func(w *bitWriter)) {
		var w bitWriter
		enc(&w)
		sizes[key] += w.bits()
	}
	size("time", func(w *bitWriter) { encodeTimes(w, ns) })
	size("raw-xor", func(w *bitWriter) { encodeXOR(w, raws, nil) })
	size("raw-decimal", func(w *bitWriter) { encodeDecimal(w, raws) })
	size("raw-chosen", func(w *bitWriter) { encodeFloats(w, raws, nil) })
	size("value-xor", func(w *bitWriter) { encodeXOR(w, vals, nil) })
	size("value-decimal", func(w *bitWriter) { encodeDecimal(w, vals) })
	size("value-ratio", func(w *bitWriter) { encodeXOR(w, vals, raws) })
	size("value-chosen", func(w *bitWriter) { encodeValues(w, vals, raws, cals) })
	sizes["chunk"] += 8 * len(encodeChunk(pts)) // the whole chunk, header and checksum included
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
