package store

import (
	"encoding/binary"
	"errors"
	"fmt"
	"log/slog"
	"sync"
	"time"

	bolt "go.etcd.io/bbolt"
	berrors "go.etcd.io/bbolt/errors"
)

// Bucket names at the top of the file. The daemon keeps its own buckets
// (calibrations, alarm state, outbox) beside these through Bolt.
var (
	bucketMeta    = []byte("meta")
	bucketSeries  = []byte("series")
	bucketDamaged = []byte("damaged-chunks")
	keySchema     = []byte("schema")
)

// schemaVersion is the layout this package writes: meta/schema, one nested
// bucket per series under series/, chunks as described in chunk.go, and
// the minute and hour roll-ups beside them (rollupstore.go). Schema 1 had
// version-1 chunks only; schema 2 had version-2 chunks and no roll-ups;
// Open brings either to schema 3 (migrate.go).
const schemaVersion = 3

// Limits of one chunk; see doc.go for how they were chosen.
const (
	chunkMaxPoints = 1024
	chunkMaxSpan   = time.Hour
)

// DefaultMaxBuffered is the default bound on points held in memory while
// the disk refuses writes: 10 gauges at 1 Hz for over 7 hours.
const DefaultMaxBuffered = 1 << 18

// DefaultResolution is the default time resolution: a serial exchange
// lasts milliseconds, so a poll time finer than that is noise.
const DefaultResolution = time.Millisecond

// Options control Open.
type Options struct {
	Timeout     time.Duration // how long to wait for the file lock; 0 means 1 s
	Resolution  time.Duration // times are cut to a multiple of this on Append; 0 means DefaultResolution; must divide 1 s
	ReadOnly    bool          // open for queries only; the file must already be a store
	MaxBuffered int           // points kept in memory at most; 0 means DefaultMaxBuffered
	MaxBytes    int           // refuse to grow the file beyond this many bytes; 0 means no limit
	Logger      *slog.Logger  // nil discards
}

// A DB is a sample store in one bbolt file. Its methods are safe for
// concurrent use.
type DB struct {
	path     string
	bolt     *bolt.DB
	log      *slog.Logger
	maxBuf   int
	readOnly bool
	res      time.Duration // see Options.Resolution
	rollups  bool          // the file keeps roll-ups (schema 3); a read-only schema-2 file does not

	flushMu sync.Mutex      // held while the disk copy changes; see Range
	tails   map[string]tail // the open end of each series; guarded by flushMu

	mu     sync.Mutex // guards the fields below; never held during disk I/O
	buf    []pending  // in append order
	stats  Stats
	closed bool
}

// A pending point waits in memory for the next Flush.
type pending struct {
	series string
	p      Point
}

// lockedError reports a store file another process holds.
type lockedError struct {
	path string
	err  error
}

func (e *lockedError) Error() string {
	return e.path + " is in use by another holdfast (a running daemon holds it); stop it or ask its HTTP API"
}

func (e *lockedError) Unwrap() error { return e.err }

// Open opens the store at path, creating the file and its buckets if needed
// (unless opt.ReadOnly), and checks the schema version. A file locked by
// another process fails after opt.Timeout with an error that wraps bbolt's
// ErrTimeout.
func Open(path string, opt Options) (*DB, error) {
	if opt.Resolution == 0 {
		opt.Resolution = DefaultResolution
	}
	if err := CheckResolution(opt.Resolution); err != nil {
		return nil, fmt.Errorf("open store %s: %w", path, err)
	}
	bo := &bolt.Options{
		Timeout:         opt.Timeout,
		ReadOnly:        opt.ReadOnly,
		NoFreelistSync:  true, // the freelist is rebuilt on open instead of rewritten per commit
		FreelistType:    bolt.FreelistMapType,
		InitialMmapSize: 256 << 20, // readers rarely block a writer's remap
		MaxSize:         opt.MaxBytes,
	}
	if bo.Timeout == 0 {
		bo.Timeout = time.Second
	}
	if opt.MaxBytes > 0 {
		bo.InitialMmapSize = min(bo.InitialMmapSize, opt.MaxBytes)
	}
	b, err := bolt.Open(path, 0o600, bo)
	if errors.Is(err, berrors.ErrTimeout) {
		return nil, &lockedError{path, err}
	}
	if err != nil {
		return nil, fmt.Errorf("open store %s: %w", path, err)
	}
	db := &DB{path: path, bolt: b, log: opt.Logger, maxBuf: opt.MaxBuffered, readOnly: opt.ReadOnly,
		res: opt.Resolution, tails: map[string]tail{}}
	if db.log == nil {
		db.log = slog.New(slog.DiscardHandler)
	}
	if db.maxBuf <= 0 {
		db.maxBuf = DefaultMaxBuffered
	}
	schema, err := db.checkSchema()
	db.rollups = schema >= 3
	if err == nil && schema < schemaVersion && !db.readOnly {
		err = db.migrate(schema)
		db.rollups = err == nil
	}
	if err != nil {
		b.Close()
		return nil, fmt.Errorf("open store %s: %w", path, err)
	}
	db.stats.FileBytes = db.fileSize()
	return db, nil
}

// CheckResolution says why d cannot be a store's time resolution, or
// returns nil: it must be positive, at most 1 s, and divide 1 s evenly
// (1ms, 10ms, 100µs, ...), so stored times fall on whole seconds.
func CheckResolution(d time.Duration) error {
	if d <= 0 || d > time.Second || time.Second%d != 0 {
		return fmt.Errorf("time resolution %s must be positive, at most 1s and divide 1s evenly (such as 1ms, 10ms or 1µs)", d)
	}
	return nil
}

// checkSchema creates the buckets in a new file, refuses files this
// version cannot read, and returns the file's schema version.
func (db *DB) checkSchema() (uint64, error) {
	var got uint64
	check := func(tx *bolt.Tx) error {
		meta := tx.Bucket(bucketMeta)
		if meta == nil {
			empty := true
			tx.ForEach(func([]byte, *bolt.Bucket) error { empty = false; return nil })
			switch {
			case !empty:
				return errors.New("the file holds other data, not a holdfast store (no meta bucket); choose another path")
			case db.readOnly:
				return errors.New("the file is not a holdfast store yet (empty); open it once without read-only to create it")
			}
			got = schemaVersion
			return initBuckets(tx)
		}
		v := meta.Get(keySchema)
		var n int
		got, n = binary.Uvarint(v)
		if n <= 0 {
			return errors.New("the meta bucket has no readable schema version; the file is damaged or not a holdfast store")
		}
		if got > schemaVersion {
			return fmt.Errorf("written with schema version %d; this holdfast reads up to %d: use a newer holdfast", got, schemaVersion)
		}
		if tx.Bucket(bucketSeries) == nil {
			return errors.New("the series bucket is missing; the file is damaged")
		}
		return nil
	}
	if db.readOnly {
		return got, db.bolt.View(check)
	}
	return got, db.bolt.Update(check)
}

// initBuckets lays out a new file.
func initBuckets(tx *bolt.Tx) error {
	meta, err := tx.CreateBucket(bucketMeta)
	if err != nil {
		return err
	}
	if err := meta.Put(keySchema, binary.AppendUvarint(nil, schemaVersion)); err != nil {
		return err
	}
	_, err = tx.CreateBucket(bucketSeries)
	return err
}

// Path returns the file the store lives in.
func (db *DB) Path() string { return db.path }

// Bolt returns the underlying database, for the daemon's other buckets.
// Keep transactions on it short, and never open one inside a callback of
// this package's methods.
func (db *DB) Bolt() *bolt.DB { return db.bolt }

// Close flushes pending points and closes the file. If the last flush fails,
// the file is still closed and the error says how many points were lost.
func (db *DB) Close() error {
	var ferr error
	if !db.readOnly {
		ferr = db.Flush()
	}
	db.flushMu.Lock()
	defer db.flushMu.Unlock()
	db.mu.Lock()
	if db.closed {
		db.mu.Unlock()
		return ErrClosed
	}
	db.closed = true
	lost := len(db.buf)
	db.buf = nil
	db.mu.Unlock()
	if ferr != nil {
		ferr = fmt.Errorf("close store %s: %d buffered points not written: %w", db.path, lost, ferr)
	}
	return errors.Join(ferr, db.bolt.Close())
}

// fileSize returns the file's size, or 0 if it cannot be read.
func (db *DB) fileSize() int64 {
	var n int64
	db.bolt.View(func(tx *bolt.Tx) error { n = tx.Size(); return nil })
	return n
}

// chunkKey turns a time in ns into a chunk key: 8 bytes big-endian with the
// sign bit flipped, so byte order is time order before 1970 too.
func chunkKey(ns int64) []byte {
	return binary.BigEndian.AppendUint64(nil, uint64(ns)^1<<63)
}

// keyTime inverts chunkKey; ok is false for a key of the wrong length.
func keyTime(k []byte) (int64, bool) {
	if len(k) != 8 {
		return 0, false
	}
	return int64(binary.BigEndian.Uint64(k) ^ 1<<63), true
}
