package store

import (
	"path/filepath"
	"runtime"
	"testing"
	"time"

	bolt "go.etcd.io/bbolt"
)

// Benchmarks on the 10 Hz, 8-channel night (night8_test.go), each with the
// general-purpose XOR chunks (xorchunk_test.go) in the same run.

// night8Total is the number of samples in the night.
const night8Total = night8Samples * 8

// night8Flush is how many polls per channel a bulk ingest flushes at once.
const night8Flush = 6000 // ten minutes

// BenchmarkNight8Ingest writes the whole night through Append and Flush in
// bulk (ten minutes per flush) and reports the CPU cost per sample and the
// sizes: chunks, the file in use after the night, and after Compact, next
// to the XOR chunks of the same 1024-point cut.
func BenchmarkNight8Ingest(b *testing.B) {
	data := night8()
	var db *DB
	for b.Loop() {
		if db != nil {
			b.StopTimer()
			db.Close()
			b.StartTimer()
		}
		db = openTemp(b, Options{})
		for i := 0; i < night8Samples; i += night8Flush {
			for _, name := range night8Names {
				appendAll(db, name, data[name][i:min(i+night8Flush, night8Samples)])
			}
			if err := db.Flush(); err != nil {
				b.Fatal(err)
			}
		}
	}
	b.ReportMetric(float64(b.Elapsed().Nanoseconds())/float64(b.N)/night8Total, "ns/sample")
	b.ReportMetric(float64(night8Total)*float64(b.N)/b.Elapsed().Seconds(), "samples/s")
	chunks, xor := 0, 0
	for _, name := range night8Names {
		chunks += chunkBytes(b, db, name)
		for _, part := range splitChunks(data[name]) {
			xor += 8 + len(encodeXORChunk(part)) // key and value, as stored
		}
	}
	b.ReportMetric(float64(chunks)/night8Total, "chunk-B/sample")
	b.ReportMetric(float64(rollupBytes(b, db, TierMinute))/night8Total, "minute-B/sample")
	b.ReportMetric(float64(rollupBytes(b, db, TierHour))/night8Total, "hour-B/sample")
	b.ReportMetric(float64(xor)/night8Total, "xor-chunk-B/sample")
	b.ReportMetric(float64(db.fileSize())/night8Total, "file-B/sample")
	dst := filepath.Join(b.TempDir(), "compact.db")
	if err := db.Compact(dst); err != nil {
		b.Fatal(err)
	}
	b.ReportMetric(float64(usedBytes(b, dst))/night8Total, "compacted-B/sample")
}

// rollupBytes returns the bytes of the keys and records of every series'
// roll-ups of tier t.
func rollupBytes(tb testing.TB, db *DB, t Tier) int {
	n := 0
	err := db.bolt.View(func(tx *bolt.Tx) error {
		top := tx.Bucket(tierBucket(t))
		if top == nil {
			return nil
		}
		return top.ForEachBucket(func(name []byte) error {
			return top.Bucket(name).ForEach(func(k, v []byte) error { n += len(k) + len(v); return nil })
		})
	})
	if err != nil {
		tb.Fatal(err)
	}
	return n
}

// usedBytes returns the bytes of a bbolt file's pages in use.
func usedBytes(tb testing.TB, path string) int64 {
	cp, err := bolt.Open(path, 0o600, &bolt.Options{ReadOnly: true})
	if err != nil {
		tb.Fatal(err)
	}
	defer cp.Close()
	var used int64
	cp.View(func(tx *bolt.Tx) error { used = tx.Size(); return nil })
	return used
}

// night8Chunks cuts every channel of the night into full chunks.
func night8Chunks(data map[string][]Point) [][]Point {
	var out [][]Point
	for _, name := range night8Names {
		out = append(out, splitChunks(data[name])...)
	}
	return out
}

// BenchmarkCodec8 encodes and decodes the night's full chunks with the
// store's codec and with the XOR chunks, and reports samples/s.
func BenchmarkCodec8(b *testing.B) {
	chunks := night8Chunks(night8())
	run := func(name string, fn func(pts []Point, enc []byte)) {
		b.Run(name, func(b *testing.B) {
			for b.Loop() {
				for _, c := range chunks {
					fn(c, nil)
				}
			}
			b.ReportMetric(float64(night8Total)*float64(b.N)/b.Elapsed().Seconds(), "samples/s")
		})
	}
	run("store-encode", func(pts []Point, _ []byte) { encodeChunk(pts) })
	run("xor-encode", func(pts []Point, _ []byte) { encodeXORChunk(pts) })
	storeEnc, xorEnc := make([][]byte, len(chunks)), make([][]byte, len(chunks))
	for i, c := range chunks {
		storeEnc[i], xorEnc[i] = encodeChunk(c), encodeXORChunk(c)
	}
	decode := func(name string, enc [][]byte, dec func([]byte) ([]Point, error)) {
		b.Run(name, func(b *testing.B) {
			for b.Loop() {
				for _, e := range enc {
					if _, err := dec(e); err != nil {
						b.Fatal(err)
					}
				}
			}
			b.ReportMetric(float64(night8Total)*float64(b.N)/b.Elapsed().Seconds(), "samples/s")
		})
	}
	decode("store-decode", storeEnc, decodeChunk)
	decode("xor-decode", xorEnc, decodeXORChunk)
}

// xorBolt is the baseline store: XOR chunks in bbolt, one bucket per
// series, one new chunk per series per flush (no merging).
type xorBolt struct{ db *bolt.DB }

// openXORBolt opens the baseline store with the store's bbolt options.
func openXORBolt(tb testing.TB) *xorBolt {
	db, err := bolt.Open(filepath.Join(tb.TempDir(), "xor.db"), 0o600, &bolt.Options{
		NoFreelistSync: true, FreelistType: bolt.FreelistMapType, InitialMmapSize: 256 << 20})
	if err != nil {
		tb.Fatal(err)
	}
	tb.Cleanup(func() { db.Close() })
	return &xorBolt{db}
}

// put writes one chunk per series in one transaction.
func (x *xorBolt) put(series []string, pts [][]Point) error {
	return x.db.Update(func(tx *bolt.Tx) error {
		for i, s := range series {
			b, err := tx.CreateBucketIfNotExists([]byte(s))
			if err != nil {
				return err
			}
			b.FillPercent = fillPercent
			if err := b.Put(chunkKey(pts[i][0].At.UnixNano()), encodeXORChunk(pts[i])); err != nil {
				return err
			}
		}
		return nil
	})
}

// BenchmarkCadence8 is the daemon's steady state on the night: one second
// of all eight channels (80 samples), one fsynced flush, against the same
// through the XOR baseline in bbolt.
func BenchmarkCadence8(b *testing.B) {
	data := night8()
	b.Run("store", func(b *testing.B) {
		db := openTemp(b, Options{})
		i := 0
		for b.Loop() {
			for _, name := range night8Names {
				appendAll(db, name, data[name][i:i+10])
			}
			if err := db.Flush(); err != nil {
				b.Fatal(err)
			}
			i = (i + 10) % night8Samples
			if i == 0 {
				b.Fatal("ran past the night; use a smaller -benchtime")
			}
		}
		b.ReportMetric(float64(b.Elapsed().Microseconds())/1000/float64(b.N), "ms/flush")
	})
	b.Run("xor-bbolt", func(b *testing.B) {
		x := openXORBolt(b)
		parts := make([][]Point, len(night8Names))
		i := 0
		for b.Loop() {
			for j, name := range night8Names {
				parts[j] = data[name][i : i+10]
			}
			if err := x.put(night8Names, parts); err != nil {
				b.Fatal(err)
			}
			i = (i + 10) % night8Samples
		}
		b.ReportMetric(float64(b.Elapsed().Microseconds())/1000/float64(b.N), "ms/flush")
	})
}

// BenchmarkQuery8h reads the whole night of one channel, warm, through
// Range and through the XOR baseline in bbolt, and reports ms per query.
func BenchmarkQuery8h(b *testing.B) {
	pts := night8()["chamber"]
	b.Run("store", func(b *testing.B) {
		db := openTemp(b, Options{})
		for i := 0; i < len(pts); i += night8Flush {
			appendAll(db, "chamber", pts[i:min(i+night8Flush, len(pts))])
			if err := db.Flush(); err != nil {
				b.Fatal(err)
			}
		}
		for b.Loop() {
			n := 0
			if err := db.Range("chamber", minTime, maxTime, func(Point) bool { n++; return true }); err != nil || n != len(pts) {
				b.Fatalf("read %d points, %v", n, err)
			}
		}
		b.ReportMetric(float64(b.Elapsed().Microseconds())/1000/float64(b.N), "query-ms")
	})
	b.Run("xor-bbolt", func(b *testing.B) {
		x := openXORBolt(b)
		for _, part := range splitChunks(pts) {
			if err := x.put([]string{"chamber"}, [][]Point{part}); err != nil {
				b.Fatal(err)
			}
		}
		for b.Loop() {
			n := 0
			err := x.db.View(func(tx *bolt.Tx) error {
				return tx.Bucket([]byte("chamber")).ForEach(func(_, v []byte) error {
					got, err := decodeXORChunk(v)
					n += len(got)
					return err
				})
			})
			if err != nil || n != len(pts) {
				b.Fatalf("read %d points, %v", n, err)
			}
		}
		b.ReportMetric(float64(b.Elapsed().Microseconds())/1000/float64(b.N), "query-ms")
	})
}

// BenchmarkReduce8h reduces the night of one channel (10 Hz, 288 000
// points) to 1000 points, warm: from the minute roll-ups, as Reduce now
// chooses, and from the raw points, as it did before roll-ups.
func BenchmarkReduce8h(b *testing.B) {
	pts := night8()["chamber"]
	db := openTemp(b, Options{})
	for i := 0; i < len(pts); i += night8Flush {
		appendAll(db, "chamber", pts[i:min(i+night8Flush, len(pts))])
		if err := db.Flush(); err != nil {
			b.Fatal(err)
		}
	}
	from, to := night8Start, night8Start.Add(8*time.Hour)
	for _, c := range []struct {
		name string
		run  func() (Reduction, error)
	}{
		{"rollups", func() (Reduction, error) { return db.ReduceTiered("chamber", from, to, 1000) }},
		{"raw", func() (Reduction, error) { return db.reduceRaw("chamber", from, to, 1000) }},
	} {
		b.Run(c.name, func(b *testing.B) {
			for b.Loop() {
				if r, err := c.run(); err != nil || len(r.Points) > 1000 || r.Count != len(pts) {
					b.Fatalf("%d points of %d, %v", len(r.Points), r.Count, err)
				}
			}
			b.ReportMetric(float64(b.Elapsed().Microseconds())/1000/float64(b.N), "query-ms")
		})
	}
}

func TestXORBaselineRoundTrips(t *testing.T) {
	// The baseline must be lossless on the night (times are whole ms there),
	// or its sizes would not be a fair comparison.
	for i, c := range night8Chunks(night8()) {
		if i%23 != 0 {
			continue
		}
		got, err := decodeXORChunk(encodeXORChunk(c))
		if err != nil {
			t.Fatal(err)
		}
		samePoints(t, got, c)
	}
}

// BenchmarkResidentNight stores the night at the daemon's cadence (one
// flush per second of data, 80 samples) and reports what it leaves in
// memory: the mapped file's resident bytes and the store's heap growth,
// per sample, with the file's size beside them.
func BenchmarkResidentNight(b *testing.B) {
	data := night8()
	for b.Loop() {
		b.StopTimer()
		runtime.GC()
		var before runtime.MemStats
		runtime.ReadMemStats(&before)
		db := openTemp(b, Options{})
		b.StartTimer()
		for i := 0; i < night8Samples; i += 10 {
			for _, name := range night8Names {
				appendAll(db, name, data[name][i:i+10])
			}
			if err := db.Flush(); err != nil {
				b.Fatal(err)
			}
		}
		b.StopTimer()
		runtime.GC()
		var after runtime.MemStats
		runtime.ReadMemStats(&after)
		mapped, err := db.MappedResident()
		if err != nil {
			b.Skip(err)
		}
		b.ReportMetric(float64(mapped)/night8Total, "resident-B/sample")
		b.ReportMetric(float64(int64(after.HeapInuse)-int64(before.HeapInuse))/(1<<20), "heap-growth-MiB")
		b.ReportMetric(float64(db.fileSize())/night8Total, "file-B/sample")
		db.Close()
		b.StartTimer()
	}
}

// BenchmarkHeapAsDataGrows stores four nights in bulk, one a day, and
// reports the heap in use (after a collection, the nights' test data
// excluded) after the first and after the fourth: the store keeps no
// per-sample state, so the heap must not grow with the file.
func BenchmarkHeapAsDataGrows(b *testing.B) {
	data := night8()
	heap := func() float64 {
		runtime.GC()
		var m runtime.MemStats
		runtime.ReadMemStats(&m)
		return float64(m.HeapInuse) / (1 << 20)
	}
	for b.Loop() {
		b.StopTimer()
		base := heap()
		db := openTemp(b, Options{})
		var first float64
		for night := range 4 {
			shift := time.Duration(night) * 24 * time.Hour
			for i := 0; i < night8Samples; i += night8Flush {
				for _, name := range night8Names {
					for _, p := range data[name][i:min(i+night8Flush, night8Samples)] {
						p.At = p.At.Add(shift)
						db.Append(name, p)
					}
				}
				if err := db.Flush(); err != nil {
					b.Fatal(err)
				}
			}
			if night == 0 {
				first = heap() - base
			}
		}
		b.ReportMetric(first, "heap-after-1-night-MiB")
		b.ReportMetric(heap()-base, "heap-after-4-nights-MiB")
		b.ReportMetric(float64(db.fileSize())/(1<<20), "file-MiB")
		db.Close()
		b.StartTimer()
	}
}
