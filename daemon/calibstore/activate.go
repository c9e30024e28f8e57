package calibstore

import (
	"encoding/binary"
	"fmt"
	"time"

	bolt "go.etcd.io/bbolt"
)

// Activate makes version id its gauge's active calibration at time at, in
// one transaction: the active entry, the version's record (activated) and
// the replaced version's record (retired) change together, and an audit
// entry says what replaced what. It returns the id replaced (0 when the
// gauge had none) and the version as now stored. Activating the version
// already active changes nothing and returns its own id as replaced.
func (s *Store) Activate(id uint32, at time.Time, note string) (replaced uint32, r Record, err error) {
	err = s.db.Update(func(tx *bolt.Tx) error {
		vb, err := sub(tx, bucketVersions, true)
		if err != nil {
			return err
		}
		ab, err := sub(tx, bucketActive, true)
		if err != nil {
			return err
		}
		if err := getRecord(vb, id, &r); err != nil {
			return err
		}
		if v := ab.Get([]byte(r.Gauge)); len(v) == 4 {
			replaced = binary.BigEndian.Uint32(v)
		}
		if replaced == id {
			return nil
		}
		if err := retireIn(vb, replaced, at, fmt.Sprintf("replaced by calibration %d", id)); err != nil {
			return err
		}
		// Cleared, not compared with Activated: two actions in the same
		// instant, or a clock step back, must not make an active version
		// look retired.
		r.Activated, r.Retired = at, time.Time{}
		r.History = append(r.History, Change{At: at, Action: "activated", Note: note})
		if err := putJSON(vb, key32(id), r); err != nil {
			return err
		}
		if err := ab.Put([]byte(r.Gauge), key32(id)); err != nil {
			return err
		}
		return addAudit(tx, Audit{At: at, Action: "activate", Gauge: r.Gauge, Calibration: id, Replaced: replaced, Note: note})
	})
	if err != nil {
		return 0, Record{}, fmt.Errorf("activate calibration %d: %w", id, err)
	}
	return replaced, r, nil
}

// Retire makes gauge use its instrument's own curve again: its active
// version is marked retired and the active entry removed, in one
// transaction with an audit entry. It returns the id retired, or 0 when the
// gauge had no active version (then nothing changes).
func (s *Store) Retire(gauge string, at time.Time, note string) (uint32, error) {
	var id uint32
	err := s.db.Update(func(tx *bolt.Tx) error {
		vb, err := sub(tx, bucketVersions, true)
		if err != nil {
			return err
		}
		ab, err := sub(tx, bucketActive, true)
		if err != nil {
			return err
		}
		v := ab.Get([]byte(gauge))
		if len(v) != 4 {
			return nil
		}
		id = binary.BigEndian.Uint32(v)
		if err := retireIn(vb, id, at, note); err != nil {
			return err
		}
		if err := ab.Delete([]byte(gauge)); err != nil {
			return err
		}
		return addAudit(tx, Audit{At: at, Action: "retire", Gauge: gauge, Replaced: id, Note: note})
	})
	if err != nil {
		return 0, fmt.Errorf("retire the calibration of %s: %w", gauge, err)
	}
	return id, nil
}

// retireIn marks version id (if not 0) retired at at.
func retireIn(vb *bolt.Bucket, id uint32, at time.Time, note string) error {
	if id == 0 {
		return nil
	}
	var old Record
	if err := getRecord(vb, id, &old); err != nil {
		return err
	}
	old.Retired = at
	old.History = append(old.History, Change{At: at, Action: "retired", Note: note})
	return putJSON(vb, key32(id), old)
}
