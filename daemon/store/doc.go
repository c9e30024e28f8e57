// Package store keeps every sample of every gauge in one bbolt file,
// compactly, and answers time-range queries. It owns the series layout and
// the chunk format; it must not know about gauges, drivers, calibrations or
// alarms beyond the numbers in a Point.
//
// # Layout
//
//	meta/schema              uvarint schema version (1)
//	series/<name>/<key>      one chunk; key = 8-byte big-endian start time in
//	                         ns since 1970 with the sign bit flipped
//	damaged-chunks/<name>/.. unreadable chunks a write moved aside, byte for byte
//
// A chunk holds up to 1024 points spanning under one hour (17 minutes at
// 1 Hz). Every chunk starts with a version byte and a CRC-32C, so a torn or
// corrupted chunk is found on read and reported as a *ChunkError while the
// other chunks stay readable. The columns are described in chunk.go
// (times), decimal.go and xor.go (floats) and columns.go (values, runs).
//
// # Writing
//
// Append buffers in memory; Flush writes everything buffered in one bbolt
// transaction (the daemon calls it once per second). A failed Flush keeps
// the points for the next one; the buffer is bounded and drops its oldest
// points, counted, only when the bound is hit. A process killed between
// flushes loses only what was buffered. The file is opened with
// NoFreelistSync and the hash-map freelist, never NoSync.
//
// The open (last) chunk of a series is decoded, extended and rewritten on
// each flush rather than appended as small sealed blocks: bbolt rewrites the
// whole leaf page on any change anyway, so blocks would save only CPU, and
// the rewrite keeps every chunk fully compressed with a single code path for
// in-order and late points. The figures are in the benchmarks
// (BenchmarkFlushTenGauges).
//
// # Order
//
// Points may arrive out of order and with duplicate times: they are stored
// sorted by time, equal times in append order. A late point is merged into
// the chunk that covers its time.
package store
