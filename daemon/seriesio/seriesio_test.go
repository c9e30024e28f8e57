package seriesio

import (
	"bytes"
	"errors"
	"io"
	"math"
	"os"
	"os/exec"
	"path/filepath"
	"regexp"
	"slices"
	"strconv"
	"strings"
	"testing"
	"time"

	"holdfast/daemon/store"
)

// Demo data: an invented overnight pump-down of "bakeout-3" from 22:00.
var night0 = time.Date(2031, 3, 14, 22, 0, 0, 0, time.UTC)

func openStore(t testing.TB) (*store.DB, string) {
	t.Helper()
	path := filepath.Join(t.TempDir(), "holdfast.db")
	db, err := store.Open(path, store.Options{})
	if err != nil {
		t.Fatal(err)
	}
	t.Cleanup(func() { db.Close() })
	return db, path
}

// awkward returns points whose every field is hard to carry as text.
func awkward() []store.Point {
	odd := math.Float64frombits(0xfff8000000000000) // the NaN 0/0 gives on amd64
	vals := []float64{1.23e-4, math.NaN(), odd, math.Inf(1), math.Inf(-1), math.Copysign(0, -1),
		5e-324, math.MaxFloat64, 0.1 + 0.2, -273.15}
	var pts []store.Point
	for i, v := range vals {
		pts = append(pts, store.Point{At: night0.Add(time.Duration(i)*time.Second + 123456789), Raw: vals[len(vals)-1-i],
			Value: v, Quality: uint8(i % 6), Calibration: uint32(math.MaxUint32 - i)})
	}
	pts = append(pts, store.Point{At: time.Date(1901, 1, 1, 0, 0, 0, 1, time.UTC), Raw: 1, Value: 2}) // before 1970
	return pts
}

func sameBits(a, b store.Point) bool {
	return a.At.Equal(b.At) && math.Float64bits(a.Raw) == math.Float64bits(b.Raw) &&
		math.Float64bits(a.Value) == math.Float64bits(b.Value) && a.Quality == b.Quality && a.Calibration == b.Calibration
}

func everything(t *testing.T, db *store.DB, series string) []store.Point {
	t.Helper()
	var out []store.Point
	if err := db.Scan(series, time.Unix(-1<<40, 0), time.Unix(1<<40, 0), func(p store.Point) bool {
		out = append(out, p)
		return true
	}); err != nil {
		t.Fatal(err)
	}
	return out
}

func fileOpener(path string) func() (io.ReadCloser, error) {
	return func() (io.ReadCloser, error) { return os.Open(path) }
}

func exportCSV(t *testing.T, db *store.DB, series ...string) string {
	t.Helper()
	var buf bytes.Buffer
	e := Export{Series: series, From: time.Unix(-1<<40, 0), To: time.Unix(1<<40, 0), Format: "csv"}
	if _, err := e.Write(&buf, db); err != nil {
		t.Fatal(err)
	}
	path := filepath.Join(t.TempDir(), "night.csv")
	if err := os.WriteFile(path, buf.Bytes(), 0o600); err != nil {
		t.Fatal(err)
	}
	return path
}

func TestExportImportRoundTripsBitForBit(t *testing.T) {
	src, _ := openStore(t)
	want := map[string][]store.Point{"chamber.cdg": awkward(), "fore_line-1": awkward()[:4]}
	for s, pts := range want {
		for _, p := range pts {
			src.Append(s, p)
		}
	}
	if err := src.Flush(); err != nil {
		t.Fatal(err)
	}
	path := exportCSV(t, src, "chamber.cdg", "fore_line-1")
	dst, _ := openStore(t)
	res, err := Import{Name: path}.Run(dst, fileOpener(path))
	if err != nil {
		t.Fatal(err)
	}
	if res.Stored != 15 || res.Duplicates != 0 {
		t.Fatalf("import %+v; want 15 stored", res)
	}
	for s, pts := range want {
		// The store keeps times to its resolution (1 ms by default, cut
		// towards the past); the round trip must give back what it holds.
		for i := range pts {
			pts[i].At = pts[i].At.Truncate(store.DefaultResolution)
		}
		slices.SortStableFunc(pts, func(a, b store.Point) int { return a.At.Compare(b.At) })
		if held := everything(t, src, s); !slices.EqualFunc(held, pts, sameBits) {
			t.Errorf("%s: the source store holds\n %+v\nwant %+v", s, held, pts)
		}
		if got := everything(t, dst, s); !slices.EqualFunc(got, pts, sameBits) {
			t.Errorf("%s: after the round trip\n got %+v\nwant %+v", s, got, pts)
		}
	}
	// The same file again: every row is a duplicate and nothing changes.
	res, err = Import{Name: path}.Run(dst, fileOpener(path))
	if err != nil || res.Stored != 0 || res.Duplicates != 15 {
		t.Fatalf("second import %+v, %v; want 15 duplicates, nothing stored", res, err)
	}
	if n, _ := dst.Count("chamber.cdg"); n != 11 {
		t.Fatalf("after importing twice: %d samples; want 11", n)
	}
	// A second export of the imported store is the same file, byte for byte.
	a, _ := os.ReadFile(path)
	b, _ := os.ReadFile(exportCSV(t, dst, "chamber.cdg", "fore_line-1"))
	if !bytes.Equal(a, b) {
		t.Errorf("re-export differs:\n%s\n---\n%s", a, b)
	}
}

func TestMalformedImportStoresNothingAndNamesTheLines(t *testing.T) {
	text := "gauge,time,value,raw\n" +
		"chamber,2031-03-14T22:00:00Z,1.5e-3,0.2\n" +
		"chamber,2031-03-14T22:00:01Z,1.4e-3\n" + // line 3: a field short
		"chamber,yesterday,1.3e-3,0.2\n" + // line 4: bad time
		"cham ber,2031-03-14T22:00:03Z,1e-3,0.2\n" + // line 5: bad gauge name
		"chamber,1962000000000,abc,0.2\n" + // line 6: bad value (the time, Unix ms, is fine)
		"chamber,2031-03-14T22:00:05Z,1e-3,0.2\n"
	path := filepath.Join(t.TempDir(), "bad.csv")
	os.WriteFile(path, []byte(text), 0o600)
	db, _ := openStore(t)
	_, err := Import{Name: path}.Run(db, fileOpener(path))
	var ie *ImportError
	if !errors.As(err, &ie) {
		t.Fatalf("got %v; want an *ImportError", err)
	}
	var lines []int
	for _, l := range ie.Lines {
		lines = append(lines, l.Line)
	}
	if !slices.Equal(lines, []int{3, 4, 5, 6}) || !strings.Contains(err.Error(), path+":4: time \"yesterday\"") {
		t.Errorf("bad lines %v in\n%v\nwant 3, 4, 5, 6 with file:line", lines, err)
	}
	if names, _ := db.Series(); len(names) != 0 {
		t.Fatalf("a malformed file stored series %v; want nothing", names)
	}
	res, err := Import{Name: path, SkipBad: true}.Run(db, fileOpener(path))
	if err != nil || res.Stored != 2 || res.Bad != 4 {
		t.Fatalf("with SkipBad: %+v, %v; want 2 stored, 4 bad", res, err)
	}
}

func TestImportNeedsAHeader(t *testing.T) {
	for _, text := range []string{"", "chamber,2031-03-14T22:00:00Z,1e-3\n", "gauge,time\n", "gauge,time,value,when\n"} {
		path := filepath.Join(t.TempDir(), "h.csv")
		os.WriteFile(path, []byte(text), 0o600)
		db, _ := openStore(t)
		if _, err := (Import{Name: path}).Run(db, fileOpener(path)); err == nil || !strings.Contains(err.Error(), "gauge") {
			t.Errorf("%q: got %v; want an error naming the header columns", text, err)
		}
	}
}

func TestParseTime(t *testing.T) {
	now := time.Date(2026, 3, 2, 14, 5, 0, 0, time.UTC)
	for _, c := range []struct {
		in   string
		want time.Time
	}{
		{"now", now},
		{"-8h", now.Add(-8 * time.Hour)},
		{"-1h30m", now.Add(-90 * time.Minute)},
		{"-2d", now.Add(-48 * time.Hour)},
		{"+10m", now.Add(10 * time.Minute)},
		// 1772460300 s is 2026-03-02T14:05:00Z (date -u -d @1772460300; 20514 days · 86400 + 50700 s).
		{"1772460300", now},
		{"1772460300.25", now.Add(250 * time.Millisecond)},
		{"2026-03-02T15:05:00+01:00", now},
		{"2026-03-02T14:05:00.000000001Z", now.Add(1)},
	} {
		got, err := ParseTime(c.in, now)
		if err != nil || !got.Equal(c.want) {
			t.Errorf("ParseTime(%q) = %s, %v; want %s", c.in, got, err, c.want)
		}
	}
	for _, bad := range []string{"", "yesterday", "-8x", "2026-03-02", "1e99"} {
		if _, err := ParseTime(bad, now); err == nil {
			t.Errorf("ParseTime(%q) succeeded; want an error", bad)
		}
	}
}

// TestOpenMetricsBackfillsIntoPrometheus imports an exported night with
// Prometheus' own promtool and reads it back.
func TestOpenMetricsBackfillsIntoPrometheus(t *testing.T) {
	promtool, err := exec.LookPath("promtool")
	if err != nil {
		t.Skip("promtool not installed (Debian: apt-get install prometheus)")
	}
	db, _ := openStore(t)
	const n = 4 * 3600 // 4 h at 1 Hz
	for i := range n {
		at := night0.Add(time.Duration(i)*time.Second + 250*time.Millisecond)
		db.Append("chamber", store.Point{At: at, Raw: 1, Value: 1e-3 * float64(1+i%97)})
		db.Append("heater", store.Point{At: at, Raw: 1, Value: 20 + float64(i%300)/10})
	}
	db.Append("chamber", store.Point{At: night0.Add(n * time.Second), Quality: 1, Value: math.Inf(1)}) // not exported
	if err := db.Flush(); err != nil {
		t.Fatal(err)
	}
	dir := t.TempDir()
	om := filepath.Join(dir, "night.om")
	f, _ := os.Create(om)
	e := Export{Series: []string{"heater", "chamber"}, From: night0, To: night0.Add(5 * time.Hour), Format: "openmetrics",
		Kinds: map[string]string{"chamber": "pressure", "heater": "temperature"}}
	written, err := e.Write(f, db)
	f.Close()
	if err != nil || written != 2*n {
		t.Fatalf("export: %d samples, %v; want %d", written, err, 2*n)
	}
	blocks := filepath.Join(dir, "blocks")
	if out, err := exec.Command(promtool, "tsdb", "create-blocks-from", "openmetrics", om, blocks).CombinedOutput(); err != nil {
		t.Fatalf("promtool rejected the export: %v\n%s", err, out)
	}
	// promtool 2.42's dump also opens a write-ahead log; backfilled blocks have none.
	if err := os.MkdirAll(filepath.Join(blocks, "wal"), 0o700); err != nil {
		t.Fatal(err)
	}
	out, err := exec.Command(promtool, "tsdb", "dump", blocks).Output()
	if err != nil {
		t.Fatalf("promtool tsdb dump: %v", err)
	}
	// The dump prints one line per sample: {labels} value timestamp_ms.
	counts := map[string]int{}
	line := regexp.MustCompile(`^\{(.*)\} (\S+) (\d+)$`)
	var first string
	for _, l := range strings.Split(strings.TrimSpace(string(out)), "\n") {
		m := line.FindStringSubmatch(l)
		if m == nil {
			t.Fatalf("unexpected dump line %q", l)
		}
		counts[m[1]]++
		if strings.Contains(m[1], `gauge="chamber"`) && m[3] == strconv.FormatInt(night0.Add(3*time.Second+250*time.Millisecond).UnixMilli(), 10) {
			first = m[2]
		}
	}
	p := `__name__="holdfast_pressure_pascals", gauge="chamber"`
	tc := `__name__="holdfast_temperature_celsius", gauge="heater"`
	if counts[p] != n || counts[tc] != n || len(counts) != 2 {
		t.Errorf("dump holds %v; want %d samples of each of %s and %s", counts, n, p, tc)
	}
	// Sample 3 of chamber is 1e-3·(1+3) = 0.004 Pa.
	if v, _ := strconv.ParseFloat(first, 64); v != 0.004 {
		t.Errorf("chamber at +3.25 s reads %q in the dump; want 0.004", first)
	}
}
