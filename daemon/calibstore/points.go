package calibstore

import (
	"encoding/json"
	"errors"
	"fmt"
	"time"

	bolt "go.etcd.io/bbolt"
)

// A Point is one calibration pair taken from a live gauge: the mean of its
// raw signal over a window that held steady, and the reference pressure.
type Point struct {
	ID        uint64  `json:"id"`
	Gauge     string  `json:"gauge"`
	Raw       float64 `json:"raw"`          // mean raw signal over the window
	Reference float64 `json:"reference_pa"` // absolute pressure, Pa
	// Source says where the reference came from: "given", a column's
	// height and liquid, or the reference gauge and its own statistics.
	Source  string        `json:"reference_source"`
	Taken   time.Time     `json:"taken"` // end of the window
	Window  time.Duration `json:"window_ns"`
	Samples int           `json:"samples"`
	// RawStdDev is the samples' standard deviation about the window's
	// trend line (raw units); the mean's own uncertainty is smaller by √n.
	RawStdDev float64 `json:"raw_stddev"`
	// Drift is the relative change over the window of the trend line.
	Drift    float64   `json:"drift_relative"`
	DriftSE  float64   `json:"drift_se_relative"` // its standard error: a drift within about 2 of these is noise
	Note     string    `json:"note,omitempty"`
	Excluded string    `json:"excluded,omitempty"` // why it is left out of fits; empty when used
	Changed  time.Time `json:"changed,omitzero"`   // when it was excluded
}

// AddPoint stores p with a fresh id (p.ID is ignored) and returns it.
func (s *Store) AddPoint(p Point) (Point, error) {
	if p.Gauge == "" {
		return Point{}, errors.New("add point: a point needs its gauge")
	}
	err := s.db.Update(func(tx *bolt.Tx) error {
		b, err := sub(tx, bucketPoints, true)
		if err != nil {
			return err
		}
		if p.ID, err = b.NextSequence(); err != nil {
			return err
		}
		return putJSON(b, key64(p.ID), p)
	})
	if err != nil {
		return Point{}, fmt.Errorf("add point for %s: %w", p.Gauge, err)
	}
	return p, nil
}

// Points returns the points of gauge (every gauge when gauge is ""), by id,
// excluded ones included. Unreadable records are reported, the rest returned.
func (s *Store) Points(gauge string) ([]Point, error) {
	var out []Point
	var errs []error
	err := s.db.View(func(tx *bolt.Tx) error {
		b, _ := sub(tx, bucketPoints, false)
		if b == nil {
			return nil
		}
		return b.ForEach(func(k, v []byte) error {
			var p Point
			if err := json.Unmarshal(v, &p); err != nil {
				errs = append(errs, fmt.Errorf("point %x: stored record unreadable: %w", k, err))
				return nil
			}
			if gauge == "" || p.Gauge == gauge {
				out = append(out, p)
			}
			return nil
		})
	})
	return out, errors.Join(append(errs, err)...)
}

// Exclude marks point id as left out of later fits, keeping it stored, and
// returns it. An empty reason is refused: the record says why.
func (s *Store) Exclude(id uint64, reason string, at time.Time) (Point, error) {
	if reason == "" {
		return Point{}, fmt.Errorf("exclude point %d: say why (a reason is kept with the point)", id)
	}
	var p Point
	err := s.db.Update(func(tx *bolt.Tx) error {
		b, err := sub(tx, bucketPoints, true)
		if err != nil {
			return err
		}
		v := b.Get(key64(id))
		if v == nil {
			return fmt.Errorf("point %d: %w", id, ErrNotFound)
		}
		if err := json.Unmarshal(v, &p); err != nil {
			return fmt.Errorf("point %d: stored record unreadable: %w", id, err)
		}
		p.Excluded, p.Changed = reason, at
		return putJSON(b, key64(id), p)
	})
	if err != nil {
		return Point{}, fmt.Errorf("exclude point %d: %w", id, err)
	}
	return p, nil
}
