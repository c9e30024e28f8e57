package store

import (
	"encoding/binary"
	"fmt"
	"slices"
	"time"

	bolt "go.etcd.io/bbolt"
)

// migrateBatch bounds the chunks one migration transaction rewrites.
const migrateBatch = 256

// migrate brings a file of schema from (1 or 2) to schemaVersion. From
// schema 1 it rewrites every version-1 chunk as version 2, series by
// series in transactions of at most migrateBatch chunks; the points stay
// bit for bit, times to the nanosecond (the chunk's time unit follows its
// times). Then it builds every series' minute and hour roll-ups from its
// points (rebuildRollups, a few hours per transaction), and records the
// schema. A migration cut short (a crash, a full disk) leaves a readable
// file, as both chunk versions read and roll-ups are only used once the
// schema says they are complete, and the next Open starts the roll-ups
// again. Chunks that cannot be decoded are left as they are, to be
// reported when read.
func (db *DB) migrate(from uint64) error {
	start := time.Now()
	var names [][]byte
	err := db.bolt.View(func(tx *bolt.Tx) error {
		return tx.Bucket(bucketSeries).ForEachBucket(func(k []byte) error {
			names = append(names, slices.Clone(k))
			return nil
		})
	})
	if err != nil {
		return fmt.Errorf("migrate to schema %d: %w", schemaVersion, err)
	}
	db.log.Info("store schema migration started", "series", len(names), "from_schema", from, "to_schema", schemaVersion)
	rewritten, skipped := 0, 0
	for _, name := range names {
		if from >= 2 {
			break
		}
		n, bad, err := db.migrateSeries(name)
		rewritten, skipped = rewritten+n, skipped+bad
		if err != nil {
			return fmt.Errorf("migrate series %q to schema %d: %w", name, schemaVersion, err)
		}
	}
	for _, name := range names {
		bad, err := db.rebuildRollups(string(name), -1<<63, 1<<63-1)
		if err != nil {
			return fmt.Errorf("migrate series %q to schema %d: %w", name, schemaVersion, err)
		}
		if from >= 2 {
			skipped += len(bad) // from schema 1 the chunk pass counted them
		}
	}
	err = db.bolt.Update(func(tx *bolt.Tx) error {
		return tx.Bucket(bucketMeta).Put(keySchema, binary.AppendUvarint(nil, schemaVersion))
	})
	if err != nil {
		return fmt.Errorf("migrate to schema %d: %w", schemaVersion, err)
	}
	db.log.Info("store schema migration done", "chunks", rewritten, "unreadable_chunks", skipped,
		"duration_seconds", time.Since(start).Seconds())
	return nil
}

// migrateSeries rewrites one series' version-1 chunks; it returns how
// many it rewrote and how many it could not read.
func (db *DB) migrateSeries(name []byte) (int, int, error) {
	rewritten, skipped := 0, 0
	var resume []byte
	for {
		var next []byte
		n, bad := 0, 0
		err := db.bolt.Update(func(tx *bolt.Tx) error {
			next, n, bad = nil, 0, 0
			b := tx.Bucket(bucketSeries).Bucket(name)
			if b == nil {
				return nil
			}
			b.FillPercent = fillPercent
			type put struct{ k, v []byte }
			var puts []put
			c := b.Cursor()
			k, v := c.First()
			if resume != nil {
				k, v = c.Seek(resume)
			}
			for ; k != nil && len(puts) < migrateBatch; k, v = c.Next() {
				if _, ok := keyTime(k); !ok || v == nil || len(v) == 0 || v[0] != 1 {
					continue
				}
				pts, err := decodeChunk(v)
				if err != nil {
					bad++
					continue
				}
				puts = append(puts, put{slices.Clone(k), encodeChunk(pts)})
			}
			if k != nil {
				next = slices.Clone(k)
			}
			for _, p := range puts { // after the cursor is done with the bucket
				if err := b.Put(p.k, p.v); err != nil {
					return err
				}
			}
			n = len(puts)
			return nil
		})
		if err != nil {
			return rewritten, skipped, err
		}
		rewritten, skipped = rewritten+n, skipped+bad
		if next == nil {
			return rewritten, skipped, nil
		}
		resume = next
	}
}
