package calibstore

import (
	"encoding/json"
	"errors"
	"fmt"
	"time"

	bolt "go.etcd.io/bbolt"
)

// An Audit is one change made to a gauge's calibration or to its stored
// samples: an activation, a retirement, or a reprocessing of history.
type Audit struct {
	ID     uint64    `json:"id"`
	At     time.Time `json:"at"`
	Action string    `json:"action"` // activate, retire, reprocess
	Gauge  string    `json:"gauge"`
	// Calibration is the version activated or applied (0: the instrument's own curve).
	Calibration uint32 `json:"calibration"`
	Replaced    uint32 `json:"replaced,omitempty"` // activate, retire: the version that was active before
	// Reprocess only: the span asked for, how many stored samples were
	// recomputed and how many changed, and which calibrations had produced
	// them before, so the step can be undone by reprocessing each run again.
	From     time.Time `json:"from,omitzero"`
	To       time.Time `json:"to,omitzero"`
	Samples  int       `json:"samples,omitempty"`
	Changed  int       `json:"changed,omitempty"`
	Previous []Run     `json:"previous,omitempty"`
	// KeptFlags counts samples left as stored because their quality was
	// flagged (a sensor fault, the instrument off, or a range flag), or
	// because the new calibration would have flagged a sample that had a
	// value (only --recheck-range lets it).
	KeptFlags int    `json:"kept_flags,omitempty"`
	Status    string `json:"status,omitempty"` // reprocess: started, done, or failed: why
	Note      string `json:"note,omitempty"`
}

// A Run is a stretch of consecutive stored samples that one calibration produced.
type Run struct {
	From        time.Time `json:"from"`
	To          time.Time `json:"to"` // time of the run's last sample
	Calibration uint32    `json:"calibration"`
	Samples     int       `json:"samples"`
}

// AddAudit stores a with a fresh id and returns it.
func (s *Store) AddAudit(a Audit) (Audit, error) {
	err := s.db.Update(func(tx *bolt.Tx) error { return addAuditRet(tx, &a) })
	if err != nil {
		return Audit{}, fmt.Errorf("add audit record for %s: %w", a.Gauge, err)
	}
	return a, nil
}

// UpdateAudit rewrites the stored record a.ID (a reprocess that finished).
func (s *Store) UpdateAudit(a Audit) error {
	err := s.db.Update(func(tx *bolt.Tx) error {
		b, err := sub(tx, bucketAudit, true)
		if err != nil {
			return err
		}
		if b.Get(key64(a.ID)) == nil {
			return fmt.Errorf("audit record %d: %w", a.ID, ErrNotFound)
		}
		return putJSON(b, key64(a.ID), a)
	})
	if err != nil {
		return fmt.Errorf("update audit record %d: %w", a.ID, err)
	}
	return nil
}

func addAudit(tx *bolt.Tx, a Audit) error { return addAuditRet(tx, &a) }

func addAuditRet(tx *bolt.Tx, a *Audit) error {
	b, err := sub(tx, bucketAudit, true)
	if err != nil {
		return err
	}
	if a.ID, err = b.NextSequence(); err != nil {
		return err
	}
	return putJSON(b, key64(a.ID), a)
}

// Audits returns the audit records of gauge (all when gauge is ""), oldest first.
func (s *Store) Audits(gauge string) ([]Audit, error) {
	var out []Audit
	var errs []error
	err := s.db.View(func(tx *bolt.Tx) error {
		b, _ := sub(tx, bucketAudit, false)
		if b == nil {
			return nil
		}
		return b.ForEach(func(k, v []byte) error {
			var a Audit
			if err := json.Unmarshal(v, &a); err != nil {
				errs = append(errs, fmt.Errorf("audit record %x unreadable: %w", k, err))
				return nil
			}
			if gauge == "" || a.Gauge == gauge {
				out = append(out, a)
			}
			return nil
		})
	})
	return out, errors.Join(append(errs, err)...)
}

// AddRuns appends the run of one more sample to runs: samples must come in time order.
func AddRuns(runs []Run, at time.Time, calibration uint32) []Run {
	if n := len(runs); n > 0 && runs[n-1].Calibration == calibration {
		runs[n-1].To = at
		runs[n-1].Samples++
		return runs
	}
	return append(runs, Run{From: at, To: at, Calibration: calibration, Samples: 1})
}
