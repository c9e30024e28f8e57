// Package store keeps every sample of every gauge in one bbolt file,
// compactly, and answers time-range queries. It owns the series layout and
// the chunk format; it must not know about gauges, drivers, calibrations or
// alarms beyond the numbers in a Point.
//
// # Layout
//
//	meta/schema              uvarint schema version (3)
//	series/<name>/<key>      one chunk; key = 8-byte big-endian start time in
//	                         ns since 1970 with the sign bit flipped
//	rollups-1m/<name>/<key>  one minute's roll-up record; key = its start, as above
//	rollups-1h/<name>/<key>  one hour's
//	horizons/<name>/<tier>   raw, 1m, 1h: the time the tier is complete from
//	                         (older data of it deleted by retention)
//	damaged-chunks/<name>/.. unreadable chunks a write moved aside, byte for byte
//
// A chunk holds up to 1024 points spanning under one hour (102 s at 10 Hz,
// 17 minutes at 1 Hz). Every chunk starts with a version byte and a
// CRC-32C, so a torn or corrupted chunk is found on read and reported as a
// *ChunkError while the other chunks stay readable. Version 2 (chunk2.go)
// is written: the time column (times2.go), quality and calibration runs,
// the raw column as decimal mantissas (alp.go, pack.go) or XOR (xor.go),
// and the value column as a rule from the raw value with exceptions
// (derive.go); residuals go through entropy.go. Version 1 (chunk1.go) is
// still read; Open rewrites a schema-1 file's chunks as version 2, logging
// the start and the end (migrate.go), and a read-only Open reads it as it is.
//
// # Time resolution
//
// Append cuts each time to the store's resolution (Options.Resolution,
// 1 ms by default; the daemon's store.resolution): a serial exchange lasts
// milliseconds, so the digits below are scheduling jitter, not information,
// and at nanoseconds they cost about 20 bits a sample, more than the value.
// A chunk keeps its times as multiples of its own unit (the greatest
// common divisor of its steps), so a migrated chunk keeps its nanoseconds
// and a changed resolution needs no rewrite.
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
// chunks (tail.go has the measurements behind this choice).
//
// # Figures
//
// On the invented 10 Hz night (night8_test.go: eight channels for 8 h,
// 2.3 million samples; 3 pressures at 3 significant digits, 3 temperatures
// at 0.1 °C, 2 status channels; whole-ms poll times with 1 ms jitter), on
// the 2-core development VM, beside general-purpose XOR chunks
// (xorchunk_test.go) in the same run: 0.56 bytes per sample in chunks
// (XOR: 8.45), 0.78 in the file after the night and 0.67 after Compact;
// about 2.4 bits a sample are time, 0–4.3 the raw value, under 0.1 the
// calibrated value and the runs. Encoding runs at 1.3–2.7× XOR's speed
// and decoding at 1.4–1.8×, bulk ingest through Append and Flush at
// 0.4–0.5 µs per sample on one core, and a flush at the daemon's cadence
// takes what XOR chunks in bbolt take (the fsync). DEVELOPERS.md has the
// commands.
//
// # Memory
//
// The heap holds the buffer and a few reused coding buffers, and stays
// flat as the file grows (BenchmarkHeapAsDataGrows). bbolt maps the file
// into memory, and the pages read through the map (queries, merges of the
// open end) count in the process's RSS until the kernel needs the memory
// back: up to the file's size, about 1 byte a sample. MappedResident
// reports that part apart from the heap.
//
// # Roll-ups and retention tiers
//
// Beside the chunks the file keeps, per series, one Rollup per minute and
// one per hour (rollupstore.go, record format in rollup_codec.go): count,
// valid and not-ok counts, min, max, compensated sum (so the mean), the
// first and last valid points, the points holding the min and max, and
// the first and last points that are not valid. Valid means quality 0 and
// a finite value; other points are counted and kept as markers, never
// averaged, so a NaN cannot poison a mean. Each Flush folds its points
// into the records of their minutes and hours in its own transaction, late
// points included; Rewrite rebuilds the records of the hours it touches in
// the same transactions (the minutes from the points, each hour from its
// minutes); Compact copies them with everything else; Open builds them for
// files of schema 1 and 2 (migrate.go).
//
// Each tier has its own retention: DeleteBefore deletes whole chunks and
// DeleteRollupsBefore whole records, both in transactions of at most 512
// keys so a Flush waits for one of them at most, and each records the
// tier's horizon (Horizons), the time from which the tier is complete.
//
// ReduceTiered (and so Reduce) reads the minute roll-ups when its buckets
// are a minute wide or more, the hour ones from an hour, and the roll-ups
// wherever the span starts before the raw horizon: a roll-up keeps exactly
// the slots a reduction bucket keeps, so the answer is the one the raw
// points would give with bucket edges on whole minutes or hours. An 8-hour
// 10 Hz night reduced to 1000 points reads 480 records instead of 288 000
// points (about 1.3 ms against 45 ms, BenchmarkReduce8h).
//
// # Order
//
// Points may arrive out of order and with duplicate times: they are stored
// sorted by time, equal times in append order. A late point is merged into
// the chunk that covers its time.
package store
