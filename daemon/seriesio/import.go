package seriesio

import (
	"encoding/csv"
	"errors"
	"fmt"
	"io"
	"math"
	"slices"
	"strconv"
	"strings"
	"time"

	"holdfast/daemon/store"
)

// importBatch is how many rows an import appends before each Flush, so
// memory stays bounded (about 5 MB) whatever the file's size.
const importBatch = 1 << 16

// maxListed caps the bad lines an ImportError lists one by one.
const maxListed = 20

// A LineError is one row of an import file that cannot be read.
type LineError struct {
	Line int // 1-based, the header is line 1
	Msg  string
}

// An ImportError lists the rows that cannot be read (the first 20, and how
// many more).
type ImportError struct {
	File  string
	Lines []LineError
	Total int
}

func (e *ImportError) Error() string {
	var b strings.Builder
	fmt.Fprintf(&b, "%s: %d line(s) cannot be read", e.File, e.Total)
	for _, l := range e.Lines {
		fmt.Fprintf(&b, "\n%s:%d: %s", e.File, l.Line, l.Msg)
	}
	if more := e.Total - len(e.Lines); more > 0 {
		fmt.Fprintf(&b, "\n… and %d more", more)
	}
	return b.String()
}

// ImportResult says what an import did.
type ImportResult struct {
	Rows       int         // data rows in the file
	Stored     int         // samples added to the store
	Duplicates int         // rows identical to a sample already stored, skipped
	Bad        int         // rows that could not be read (skipped with SkipBad)
	BadLines   []LineError // the first 20 bad rows
}

// An Import loads CSV history into a store.
type Import struct {
	Name    string // the file's name, for messages
	SkipBad bool   // store the good rows even when some are bad
}

// A row is one parsed import row.
type row struct {
	series string
	p      store.Point
}

// columns maps the header's column names to their positions.
type columns struct{ gauge, time, value, raw, quality, calibration int }

// Run reads the file twice through open: first to check every row (so a
// bad row stores nothing unless SkipBad), then to store the good rows in
// batches of 65 536 with a Flush after each. The header is required; its
// columns are gauge, time and value, then optionally raw, quality and
// calibration, in any order (a missing raw is NaN, a missing quality ok, a
// missing calibration 0). Times are RFC 3339 or Unix milliseconds. A row
// identical to the bit (gauge, time, value, raw, quality, calibration) to a
// sample already in the store, including one stored earlier by the same
// import, is skipped and counted as a duplicate; a row with the same gauge
// and time but any other field different is stored beside the existing
// sample, which is never replaced or changed. A failure while storing (a
// full disk) leaves the batches before it stored and says how many.
func (im Import) Run(db *store.DB, open func() (io.ReadCloser, error)) (ImportResult, error) {
	var res ImportResult
	var bad []LineError
	err := im.each(open, func(line int, r row, err error) error {
		res.Rows++
		if err != nil {
			res.Bad++
			if len(bad) < maxListed {
				bad = append(bad, LineError{line, err.Error()})
			}
		}
		return nil
	})
	if err != nil {
		return res, err
	}
	res.BadLines = bad
	if res.Bad > 0 && !im.SkipBad {
		return res, &ImportError{File: im.Name, Lines: bad, Total: res.Bad}
	}
	var batch []row
	store1 := func() error {
		n, dup, err := storeBatch(db, batch)
		res.Stored, res.Duplicates = res.Stored+n, res.Duplicates+dup
		batch = batch[:0]
		if err != nil {
			return fmt.Errorf("%s: stored %d samples, then: %w", im.Name, res.Stored, err)
		}
		return nil
	}
	err = im.each(open, func(line int, r row, err error) error {
		if err != nil {
			return nil
		}
		if batch = append(batch, r); len(batch) == importBatch {
			return store1()
		}
		return nil
	})
	if err != nil {
		return res, err
	}
	return res, store1()
}

// each calls fn for every data row of the file, with its line number and
// the row or why it cannot be read.
func (im Import) each(open func() (io.ReadCloser, error), fn func(line int, r row, err error) error) error {
	f, err := open()
	if err != nil {
		return err
	}
	defer f.Close()
	cr := csv.NewReader(f)
	cr.FieldsPerRecord = -1
	cr.ReuseRecord = true
	head, err := cr.Read()
	if err == io.EOF {
		return fmt.Errorf("%s: empty file; the first line must be a header such as %s", im.Name, CSVHeader)
	}
	if err != nil {
		return fmt.Errorf("%s:1: %w", im.Name, err)
	}
	cols, err := readHeader(head)
	if err != nil {
		return fmt.Errorf("%s:1: %w", im.Name, err)
	}
	for {
		rec, err := cr.Read()
		if err == io.EOF {
			return nil
		}
		line, _ := cr.FieldPos(0)
		var r row
		var pe *csv.ParseError
		switch {
		case errors.As(err, &pe):
			line, err = pe.Line, errors.New(pe.Err.Error())
		case err != nil:
			return fmt.Errorf("%s: %w", im.Name, err)
		default:
			r, err = cols.parse(rec, len(head))
		}
		if err := fn(line, r, err); err != nil {
			return err
		}
	}
}

// readHeader finds the columns by name.
func readHeader(head []string) (columns, error) {
	c := columns{-1, -1, -1, -1, -1, -1}
	for i, name := range head {
		name = strings.ToLower(strings.TrimSpace(strings.TrimPrefix(name, "\ufeff")))
		p := map[string]*int{"gauge": &c.gauge, "time": &c.time, "value": &c.value, "raw": &c.raw,
			"quality": &c.quality, "calibration": &c.calibration}[name]
		if p == nil {
			return c, fmt.Errorf("header column %d %q: want gauge, time, value and optionally raw, quality, calibration (e.g. %s)", i+1, name, CSVHeader)
		}
		if *p >= 0 {
			return c, fmt.Errorf("header names %q twice", name)
		}
		*p = i
	}
	if c.gauge < 0 || c.time < 0 || c.value < 0 {
		return c, fmt.Errorf("header %q: gauge, time and value are required (e.g. %s)", strings.Join(head, ","), CSVHeader)
	}
	return c, nil
}

// parse reads one record.
func (c columns) parse(rec []string, width int) (row, error) {
	if len(rec) != width {
		return row{}, fmt.Errorf("%d fields; the header has %d", len(rec), width)
	}
	r := row{series: rec[c.gauge], p: store.Point{Raw: math.NaN()}}
	if err := validSeries(r.series); err != nil {
		return r, err
	}
	var err error
	if r.p.At, err = parseImportTime(rec[c.time]); err != nil {
		return r, err
	}
	if y := r.p.At.Year(); y < 1678 || y > 2261 {
		return r, fmt.Errorf("time %s: outside 1678-2261, the years the store keeps", rec[c.time])
	}
	if r.p.Value, err = parseFloat(rec[c.value]); err != nil {
		return r, fmt.Errorf("value %w", err)
	}
	if c.raw >= 0 {
		if r.p.Raw, err = parseFloat(rec[c.raw]); err != nil {
			return r, fmt.Errorf("raw %w", err)
		}
	}
	if c.quality >= 0 {
		if r.p.Quality, err = parseQuality(rec[c.quality]); err != nil {
			return r, err
		}
	}
	if c.calibration >= 0 {
		n, err := strconv.ParseUint(rec[c.calibration], 10, 32)
		if err != nil {
			return r, fmt.Errorf("calibration %q: want a calibration id, 0 to 4294967295 (0: the gauge's built-in transfer)", rec[c.calibration])
		}
		r.p.Calibration = uint32(n)
	}
	return r, nil
}

// storeBatch appends the rows not already stored and flushes. It returns the
// samples stored and the duplicates skipped.
func storeBatch(db *store.DB, batch []row) (int, int, error) {
	if len(batch) == 0 {
		return 0, 0, nil
	}
	slices.SortStableFunc(batch, func(a, b row) int {
		if c := strings.Compare(a.series, b.series); c != 0 {
			return c
		}
		return a.p.At.Compare(b.p.At)
	})
	stored, dup := 0, 0
	for len(batch) > 0 {
		end := 1
		for end < len(batch) && batch[end].series == batch[0].series {
			end++
		}
		pts := make([]store.Point, end)
		for i, r := range batch[:end] {
			pts[i] = r.p
		}
		fresh, err := notStored(db, batch[0].series, pts)
		if err != nil {
			return stored, dup, err
		}
		for _, p := range fresh {
			db.Append(batch[0].series, p)
		}
		stored, dup = stored+len(fresh), dup+len(pts)-len(fresh)
		batch = batch[end:]
	}
	before := db.Stats().Rejected
	if err := db.Flush(); err != nil {
		return 0, dup, err
	}
	if r := db.Stats().Rejected - before; r > 0 {
		return stored - int(r), dup, fmt.Errorf("the store refused %d samples: %w", r, db.Stats().LastRejected)
	}
	return stored, dup, nil
}

// notStored returns the points of pts (sorted by time) that are not
// identical to a stored point or to an earlier point of pts.
func notStored(db *store.DB, series string, pts []store.Point) ([]store.Point, error) {
	seen := map[[5]uint64]bool{}
	key := func(p store.Point) [5]uint64 {
		return [5]uint64{uint64(p.At.UnixNano()), math.Float64bits(p.Value), math.Float64bits(p.Raw),
			uint64(p.Quality), uint64(p.Calibration)}
	}
	from, to := pts[0].At, pts[len(pts)-1].At.Add(time.Nanosecond)
	err := db.Scan(series, from, to, func(p store.Point) bool {
		seen[key(p)] = true
		return true
	})
	if err != nil {
		return nil, err
	}
	out := pts[:0:0]
	for _, p := range pts {
		if k := key(p); !seen[k] {
			seen[k] = true
			out = append(out, p)
		}
	}
	return out, nil
}
