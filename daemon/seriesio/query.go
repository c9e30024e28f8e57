package seriesio

import (
	"bufio"
	"encoding/json"
	"errors"
	"fmt"
	"io"
	"math"
	"strconv"
	"time"

	"holdfast/calib"
	"holdfast/daemon/store"
)

// DefaultPoints is how many points a query returns when it does not say.
const DefaultPoints = 1000

// A Query asks for several series reduced for a plot (store.Reduce).
type Query struct {
	Series   []string
	From, To time.Time
	Points   int               // 0: DefaultPoints; above store.MaxReducePoints it is capped
	Kinds    map[string]string // series → kind, echoed in the result; may be nil
}

// A QueryResult is a Query's answer, as the API's JSON carries it.
type QueryResult struct {
	From   time.Time      `json:"from"`
	To     time.Time      `json:"to"`
	Points int            `json:"points"`           // the points asked for per series, after capping
	Capped bool           `json:"capped,omitempty"` // the request asked for more than store.MaxReducePoints
	Series []SeriesResult `json:"series"`
}

// A SeriesResult is one series of a QueryResult.
type SeriesResult struct {
	Gauge string `json:"gauge"`
	Kind  string `json:"kind,omitempty"`
	// Resolution says what the samples were chosen from: "raw" (every stored
	// sample), "minute" or "hour" (the store's roll-ups, read for wide
	// buckets and where retention has already deleted the raw samples).
	// Either way every entry is a stored sample, bit for bit; from roll-ups
	// the buckets' edges fall on whole minutes or hours.
	Resolution string  `json:"resolution"`
	Stored     int     `json:"stored_samples"`    // stored samples in the span (the ones the result stands for)
	NotOK      int     `json:"not_ok_samples"`    // of them, samples whose quality is not ok
	GapLimit   float64 `json:"gap_limit_seconds"` // consecutive points further apart are separated by a gap entry
	Samples    []Entry `json:"samples"`
}

// An Entry is a stored sample or, when Gap is set, a stretch with no sample
// (from the sample before it to the sample after it); nothing is ever
// interpolated over a gap.
type Entry struct {
	Time        time.Time `json:"time,omitzero"`
	Value       *float64  `json:"value,omitempty"` // SI (Pa, °C); absent unless the quality is ok and the value finite
	Raw         *float64  `json:"raw,omitempty"`   // absent when the instrument gave no number
	Quality     string    `json:"quality,omitempty"`
	Calibration uint32    `json:"calibration,omitempty"`
	Gap         *Gap      `json:"gap,omitempty"`
}

// A Gap is a stretch with no stored sample.
type Gap struct {
	From    time.Time `json:"from"`
	To      time.Time `json:"to"`
	Seconds float64   `json:"seconds"`
}

// Check says what is wrong with the query, and caps Points.
func (q *Query) Check() error {
	switch {
	case len(q.Series) == 0:
		return errors.New("no gauge: name at least one")
	case !q.From.Before(q.To):
		return fmt.Errorf("from %s is not before to %s; swap them or widen the span", formatTime(q.From), formatTime(q.To))
	case q.Points == 0:
		q.Points = DefaultPoints
	case q.Points < 2:
		return fmt.Errorf("points %d: ask for at least 2", q.Points)
	}
	return nil
}

// Run reduces each series. Unreadable chunks are left out and reported in
// the error after the result is complete.
func (q Query) Run(db *store.DB) (QueryResult, error) {
	if err := q.Check(); err != nil {
		return QueryResult{}, err
	}
	res := QueryResult{From: q.From.UTC(), To: q.To.UTC(), Points: min(q.Points, store.MaxReducePoints),
		Capped: q.Points > store.MaxReducePoints}
	var errs []error
	for _, s := range q.Series {
		red, err := db.ReduceTiered(s, q.From, q.To, res.Points)
		var ce *store.ChunkError
		if err != nil && !errors.As(err, &ce) {
			return res, fmt.Errorf("%s: %w", s, err)
		}
		errs = append(errs, err)
		pts, limit := red.Points, red.GapLimit
		sr := SeriesResult{Gauge: s, Kind: q.Kinds[s], Resolution: red.Tier.String(), Stored: red.Count, NotOK: red.NotOK,
			GapLimit: limit.Seconds(), Samples: make([]Entry, 0, len(pts))}
		for i, p := range pts {
			if i > 0 && p.At.Sub(pts[i-1].At) > limit {
				sr.Samples = append(sr.Samples, Entry{Gap: &Gap{pts[i-1].At, p.At, p.At.Sub(pts[i-1].At).Seconds()}})
			}
			sr.Samples = append(sr.Samples, entry(p))
		}
		res.Series = append(res.Series, sr)
	}
	return res, errors.Join(errs...)
}

func entry(p store.Point) Entry {
	e := Entry{Time: p.At.UTC(), Quality: formatQuality(p.Quality), Calibration: p.Calibration}
	finite := func(v float64) *float64 {
		if math.IsNaN(v) || math.IsInf(v, 0) {
			return nil
		}
		return &v
	}
	e.Raw = finite(p.Raw)
	if calib.Quality(p.Quality).HasValue() {
		e.Value = finite(p.Value)
	}
	return e
}

// WriteJSON writes the result as indented JSON.
func (r QueryResult) WriteJSON(w io.Writer) error {
	b, err := json.MarshalIndent(r, "", "  ")
	if err != nil {
		return err
	}
	_, err = w.Write(append(b, '\n'))
	return err
}

// WriteCSV writes the result as CSV with the header
// gauge,time,value,raw,quality,calibration. A gap is a row of its own with
// quality "gap", the time the gap starts (the sample before it) and its
// length in seconds in the value column.
func (r QueryResult) WriteCSV(w io.Writer) error {
	bw := bufio.NewWriter(w)
	bw.WriteString(CSVHeader + "\n")
	opt := func(v *float64) string {
		if v == nil {
			return ""
		}
		return formatFloat(*v)
	}
	for _, s := range r.Series {
		for _, e := range s.Samples {
			if e.Gap != nil {
				fmt.Fprintf(bw, "%s,%s,%s,,gap,\n", csvField(s.Gauge), formatTime(e.Gap.From), formatFloat(e.Gap.Seconds))
				continue
			}
			fmt.Fprintf(bw, "%s,%s,%s,%s,%s,%d\n", csvField(s.Gauge), formatTime(e.Time), opt(e.Value), opt(e.Raw), e.Quality, e.Calibration)
		}
	}
	return bw.Flush()
}

// WriteText writes the result for people: one line per sample, values in
// SI units to six significant digits, gaps as a line of their own.
func (r QueryResult) WriteText(w io.Writer) error {
	bw := bufio.NewWriter(w)
	for _, s := range r.Series {
		unit := map[string]string{"pressure": "Pa", "temperature": "°C"}[s.Kind]
		from := ""
		if s.Resolution != "" && s.Resolution != store.TierRaw.String() {
			from = ", chosen from " + s.Resolution + " roll-ups"
		}
		fmt.Fprintf(bw, "%s  %s … %s  (%d points%s)\n", s.Gauge, r.From.Format(time.RFC3339), r.To.Format(time.RFC3339), len(s.Samples), from)
		for _, e := range s.Samples {
			if e.Gap != nil {
				fmt.Fprintf(bw, "  -- no samples for %s --\n", time.Duration(e.Gap.Seconds*1e9).Round(time.Millisecond))
				continue
			}
			v := "-"
			if e.Value != nil {
				v = strconv.FormatFloat(*e.Value, 'g', 6, 64) // for reading; CSV and JSON keep every bit
				if unit != "" {
					v += " " + unit
				}
			}
			q := ""
			if e.Quality != "ok" {
				q = "  " + e.Quality
			}
			fmt.Fprintf(bw, "  %s  %s%s\n", e.Time.Format("2006-01-02T15:04:05.000Z07:00"), v, q)
		}
	}
	return bw.Flush()
}
