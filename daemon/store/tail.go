package store

import bolt "go.etcd.io/bbolt"

// The open end of a series is a run of small chunks ("blocks"): each Flush
// appends its new points as one more block, encoding only those points, and
// once the run would reach chunkMaxPoints or chunkMaxSpan the run and the new
// points are decoded, merged and written back as full chunks. Measured on
// the ion-gauge demo series (BenchmarkOpenChunkCPU, 2-core Xeon VM):
// rewriting a whole open chunk of 10 / 500 / 1000 points costs 0.08 / 0.40 /
// 0.70-0.90 ms of CPU per gauge per flush, so ten gauges spend about 4 ms per
// second on average; appending a block costs a few µs plus one merge of
// ~1 ms per 1024 points. The disk cost is the same either way (bbolt
// rewrites the leaf page in both cases), and the merged chunks are the ones
// the rewrite would have made. Blocks cost ~60 bytes per flush until merged.

// A tail describes the run of blocks at the end of a series; the zero tail
// means "not known yet, scan for it".
type tail struct {
	valid       bool
	n           int   // points in the run
	first, last int64 // ns: first point of the run (its first key), last point of the series (-2^63 if none)
}

// appendSeries stores sorted points: as a new block when they all come
// after the series' last point and the run has room, by merging the run
// into full chunks when it is full, and through mergeSeries when they are
// late. It returns the series' tail afterwards.
func appendSeries(tx *bolt.Tx, series string, pts []Point, t tail) (tail, []*ChunkError, error) {
	b, err := tx.Bucket(bucketSeries).CreateBucketIfNotExists([]byte(series))
	if err != nil {
		return tail{}, nil, err
	}
	b.FillPercent = fillPercent
	c := b.Cursor()
	first, last := pts[0].At.UnixNano(), pts[len(pts)-1].At.UnixNano()
	if !t.valid {
		t = scanTail(c)
	}
	if first <= t.last { // late or same-time points: the general path
		bad, err := mergeSeries(tx, b, series, pts)
		return tail{}, bad, err
	}
	if t.n+len(pts) < chunkMaxPoints && (t.n == 0 || last-t.first < int64(chunkMaxSpan)) && last-first < int64(chunkMaxSpan) {
		if err := b.Put(chunkKey(first), encodeChunk(pts)); err != nil {
			return tail{}, nil, err
		}
		if t.n == 0 {
			t.first = first
		}
		return tail{valid: true, n: t.n + len(pts), first: t.first, last: last}, nil, nil
	}
	start := first // merge the run (if any) with the new points
	if t.n > 0 {
		start = t.first
	}
	k, v := c.Seek(chunkKey(start))
	bad, err := rechunk(tx, b, c, k, v, series, pts, last)
	if err != nil {
		return tail{}, nil, err
	}
	return scanTail(b.Cursor()), bad, nil
}

// scanTail finds the run of blocks at the end of a series: the trailing
// chunks with fewer than chunkMaxPoints points that start within
// chunkMaxSpan of the series' last point.
func scanTail(c *bolt.Cursor) tail {
	k, v := c.Last()
	if k == nil {
		return tail{valid: true, last: -1 << 63}
	}
	h, err := readHead(v)
	if err != nil { // a damaged last chunk: let the general path move it aside
		return tail{valid: true, n: 1, first: 1<<63 - 1, last: 1<<63 - 1}
	}
	t := tail{valid: true, last: h.last}
	for ; k != nil; k, v = c.Prev() {
		if _, ok := keyTime(k); !ok || v == nil {
			continue
		}
		h, err := readHead(v)
		if err != nil || h.n >= chunkMaxPoints || h.first <= t.last-int64(chunkMaxSpan) {
			break
		}
		t.n += h.n
		t.first = h.first
	}
	return t
}

// forgetTail drops what is known about a series' tail (after a change
// other than a Flush).
func (db *DB) forgetTail(series string) { delete(db.tails, series) }
