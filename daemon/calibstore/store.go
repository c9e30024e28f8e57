package calibstore

import (
	"encoding/binary"
	"encoding/json"
	"errors"
	"fmt"
	"math"
	"time"

	bolt "go.etcd.io/bbolt"

	"holdfast/calib"
)

// Bucket names; see the package documentation for the layout.
var (
	bucketRoot     = []byte("calibrations")
	bucketVersions = []byte("versions")
	bucketActive   = []byte("active")
	bucketPoints   = []byte("points")
	bucketAudit    = []byte("audit")
)

// ErrNotFound means no record has the id asked for.
var ErrNotFound = errors.New("not found")

// A Store reads and writes calibration records in a bbolt file it does not
// own. Its methods are safe for concurrent use; each is one transaction.
type Store struct{ db *bolt.DB }

// New returns a Store over db. It creates nothing until the first write.
func New(db *bolt.DB) *Store { return &Store{db: db} }

// Init creates the buckets if they are missing, so later reads find them.
func (s *Store) Init() error {
	return s.db.Update(func(tx *bolt.Tx) error {
		_, err := sub(tx, bucketVersions, true)
		if err == nil {
			_, err = sub(tx, bucketActive, true)
		}
		if err == nil {
			_, err = sub(tx, bucketPoints, true)
		}
		if err == nil {
			_, err = sub(tx, bucketAudit, true)
		}
		return err
	})
}

// A Record is one calibration version of one gauge.
type Record struct {
	ID    uint32 `json:"id"`
	Gauge string `json:"gauge"`
	Model string `json:"model"`
	// Calibration holds the points fitted, the fit report, the valid range
	// and the uncertainty budget.
	Calibration *calib.Calibration `json:"calibration"`
	PointIDs    []uint64           `json:"point_ids,omitempty"` // the stored points it was fitted to
	Notes       string             `json:"notes,omitempty"`
	Created     time.Time          `json:"created"`
	Activated   time.Time          `json:"activated,omitzero"` // the last activation
	Retired     time.Time          `json:"retired,omitzero"`   // when another version (or none) replaced it; zero while active (History keeps every step)
	History     []Change           `json:"history"`
}

// A Change is one step in a version's life.
type Change struct {
	At     time.Time `json:"at"`
	Action string    `json:"action"` // created, activated, retired
	Note   string    `json:"note,omitempty"`
}

// State says whether r is active, was active once (retired), or never was (inactive).
func (r Record) State() string {
	switch {
	case !r.Activated.IsZero() && r.Retired.IsZero():
		return "active"
	case !r.Retired.IsZero():
		return "retired"
	}
	return "inactive"
}

// sub returns the named bucket under calibrations/, creating both when
// create is set; without create a missing bucket is nil, not an error.
func sub(tx *bolt.Tx, name []byte, create bool) (*bolt.Bucket, error) {
	if !create {
		root := tx.Bucket(bucketRoot)
		if root == nil {
			return nil, nil
		}
		return root.Bucket(name), nil
	}
	root, err := tx.CreateBucketIfNotExists(bucketRoot)
	if err != nil {
		return nil, err
	}
	return root.CreateBucketIfNotExists(name)
}

func key32(id uint32) []byte { return binary.BigEndian.AppendUint32(nil, id) }
func key64(id uint64) []byte { return binary.BigEndian.AppendUint64(nil, id) }

// Add stores r as a new version with a fresh id (r.ID is ignored) and
// returns it as stored. A new version is never active: Activate makes it so.
func (s *Store) Add(r Record) (Record, error) {
	if r.Gauge == "" || r.Calibration == nil {
		return Record{}, errors.New("add calibration: a version needs its gauge and its calibration")
	}
	r.Activated, r.Retired = time.Time{}, time.Time{}
	r.History = []Change{{At: r.Created, Action: "created"}}
	err := s.db.Update(func(tx *bolt.Tx) error {
		b, err := sub(tx, bucketVersions, true)
		if err != nil {
			return err
		}
		seq, err := b.NextSequence()
		if err != nil {
			return err
		}
		if seq > math.MaxUint32 {
			return errors.New("calibration ids exhausted (over 4 billion versions)")
		}
		r.ID = uint32(seq)
		return putJSON(b, key32(r.ID), r)
	})
	if err != nil {
		return Record{}, fmt.Errorf("add calibration for %s: %w", r.Gauge, err)
	}
	return r, nil
}

// Get returns version id, or an error wrapping ErrNotFound.
func (s *Store) Get(id uint32) (Record, error) {
	var r Record
	err := s.db.View(func(tx *bolt.Tx) error {
		b, _ := sub(tx, bucketVersions, false)
		return getRecord(b, id, &r)
	})
	return r, err
}

func getRecord(b *bolt.Bucket, id uint32, r *Record) error {
	var v []byte
	if b != nil {
		v = b.Get(key32(id))
	}
	if v == nil {
		return fmt.Errorf("calibration %d: %w", id, ErrNotFound)
	}
	if err := json.Unmarshal(v, r); err != nil {
		return fmt.Errorf("calibration %d: stored record unreadable: %w", id, err)
	}
	return nil
}

// List returns the versions of gauge (every gauge when gauge is ""), by id.
// A record that cannot be read is skipped and reported in the error; the
// others are still returned.
func (s *Store) List(gauge string) ([]Record, error) {
	var out []Record
	var errs []error
	err := s.db.View(func(tx *bolt.Tx) error {
		b, _ := sub(tx, bucketVersions, false)
		if b == nil {
			return nil
		}
		return b.ForEach(func(k, v []byte) error {
			var r Record
			if err := json.Unmarshal(v, &r); err != nil {
				errs = append(errs, fmt.Errorf("calibration %d: stored record unreadable: %w", binary.BigEndian.Uint32(k), err))
				return nil
			}
			if gauge == "" || r.Gauge == gauge {
				out = append(out, r)
			}
			return nil
		})
	})
	return out, errors.Join(append(errs, err)...)
}

// Active returns every gauge's active version id.
func (s *Store) Active() (map[string]uint32, error) {
	out := map[string]uint32{}
	err := s.db.View(func(tx *bolt.Tx) error {
		b, _ := sub(tx, bucketActive, false)
		if b == nil {
			return nil
		}
		return b.ForEach(func(k, v []byte) error {
			if len(v) == 4 {
				out[string(k)] = binary.BigEndian.Uint32(v)
			}
			return nil
		})
	})
	return out, err
}

func putJSON(b *bolt.Bucket, k []byte, v any) error {
	buf, err := json.Marshal(v)
	if err != nil {
		return err
	}
	return b.Put(k, buf)
}
