package store

import (
	"errors"
	"fmt"
	"os"
	"time"

	bolt "go.etcd.io/bbolt"
)

// SeriesStats describes how one series is stored.
type SeriesStats struct {
	Series       string
	Samples      int       // points in readable chunks
	First, Last  time.Time // the first and last stored point; zero when Samples is 0
	Chunks       int       // chunks, damaged ones included
	Damaged      int       // chunks whose header cannot be read (not counted in Samples)
	PayloadBytes int64     // bytes of the chunks' values (keys not included)
}

// BytesPerSample is PayloadBytes / Samples, or 0 for an empty series.
func (s SeriesStats) BytesPerSample() float64 {
	if s.Samples == 0 {
		return 0
	}
	return float64(s.PayloadBytes) / float64(s.Samples)
}

// FileStats describes the store file as a whole.
type FileStats struct {
	Path      string
	FileBytes int64 // the file's size on disk (bbolt grows it in steps)
	UsedBytes int64 // up to the highest page in use
	PageSize  int
	FreePages int // pages inside UsedBytes that are free for reuse (Compact gives them back)
}

// SeriesStats reads the chunk headers of every series (buffered points are
// not counted). One read transaction per series.
func (db *DB) SeriesStats() ([]SeriesStats, error) {
	names, err := db.Series()
	if err != nil {
		return nil, err
	}
	out := make([]SeriesStats, 0, len(names))
	for _, name := range names {
		s, err := db.seriesStats(name)
		if err != nil {
			return nil, fmt.Errorf("stats of %q: %w", name, err)
		}
		out = append(out, s)
	}
	return out, nil
}

func (db *DB) seriesStats(name string) (SeriesStats, error) {
	s := SeriesStats{Series: name}
	if db.isClosed() {
		return s, ErrClosed
	}
	first, last := int64(0), int64(0)
	err := db.bolt.View(func(tx *bolt.Tx) error {
		b := tx.Bucket(bucketSeries).Bucket([]byte(name))
		if b == nil {
			return nil
		}
		return b.ForEach(func(k, v []byte) error {
			if _, ok := keyTime(k); !ok || v == nil {
				return nil
			}
			s.Chunks++
			s.PayloadBytes += int64(len(v))
			h, err := readHead(v)
			if err != nil {
				s.Damaged++
				return nil
			}
			if s.Samples == 0 || h.first < first {
				first = h.first
			}
			if s.Samples == 0 || h.last > last {
				last = h.last
			}
			s.Samples += h.n
			return nil
		})
	})
	if s.Samples > 0 {
		s.First, s.Last = time.Unix(0, first).UTC(), time.Unix(0, last).UTC()
	}
	return s, err
}

// FileStats measures the file. A store opened read-only does not load
// bbolt's free-page list, so for it the file is opened once more, shared
// and read-only, to count the free pages.
func (db *DB) FileStats() (FileStats, error) {
	fs := FileStats{Path: db.path}
	if db.isClosed() {
		return fs, ErrClosed
	}
	fi, err := os.Stat(db.path)
	if err != nil {
		return fs, err
	}
	fs.FileBytes = fi.Size()
	err = db.bolt.View(func(tx *bolt.Tx) error {
		fs.UsedBytes = tx.Size()
		return nil
	})
	if err != nil {
		return fs, err
	}
	fs.PageSize = db.bolt.Info().PageSize
	if !db.readOnly {
		st := db.bolt.Stats()
		fs.FreePages = st.FreePageN + st.PendingPageN
		return fs, nil
	}
	b, err := bolt.Open(db.path, 0o600, &bolt.Options{ReadOnly: true, PreLoadFreelist: true, Timeout: time.Second,
		FreelistType: bolt.FreelistMapType})
	if err != nil {
		return fs, fmt.Errorf("count free pages: %w", err)
	}
	fs.FreePages = b.Stats().FreePageN
	return fs, errors.Join(err, b.Close())
}
