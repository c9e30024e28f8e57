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
// The open end of a series is not rewritten on each flush: each flush
// appends its new points as a small block (a chunk of a few points), and
// when the blocks reach 1024 points or an hour they are merged into full
// chunks (tail.go has the measurements behind this choice). Ten gauges cost
// about 0.7 ms per flush on the test VM, almost all of it bbolt's commit,
// whatever the fill of the open chunk; rewriting the open chunk instead cost
// up to 0.9 ms of CPU per gauge per flush.
//
// Figures for an invented overnight bake (three gauges at 1 Hz for 12 h,
// 3 significant digits, jittered schedule; BenchmarkNight): 3.5 bytes per
// sample in chunks, 4.4 bytes per sample of bbolt pages after Compact.
// About 2.7 of the 3.5 bytes are timestamps: times are kept to the
// nanosecond, and 0.3 ms of scheduling jitter is ~20 bits of information
// per sample; a jitter-free schedule costs about one bit.
//
// # Order
//
// Points may arrive out of order and with duplicate times: they are stored
// sorted by time, equal times in append order. A late point is merged into
// the chunk that covers its time.
package store
