package store

import (
	"errors"
	"math"
	"path/filepath"
	"slices"
	"strings"
	"sync"
	"testing"
	"time"

	bolt "go.etcd.io/bbolt"
	berrors "go.etcd.io/bbolt/errors"
)

// openTemp opens a store in a fresh temporary directory, closed at cleanup.
func openTemp(t testing.TB, opt Options) *DB {
	t.Helper()
	db, err := Open(filepath.Join(t.TempDir(), "holdfast.db"), opt)
	if err != nil {
		t.Fatal(err)
	}
	t.Cleanup(func() { db.Close() })
	return db
}

// all returns every point of series.
func all(t testing.TB, db *DB, series string) []Point {
	t.Helper()
	var out []Point
	err := db.Range(series, minTime, maxTime, func(p Point) bool { out = append(out, p); return true })
	if err != nil {
		t.Fatalf("Range(%q): %v", series, err)
	}
	return out
}

// samePoints fails unless got and want are equal bit for bit.
func samePoints(t testing.TB, got, want []Point) {
	t.Helper()
	if len(got) != len(want) {
		t.Fatalf("got %d points, want %d", len(got), len(want))
	}
	for i := range want {
		if !sameBits(got[i], want[i]) {
			t.Fatalf("point %d: got %+v, want %+v", i, got[i], want[i])
		}
	}
}

// truncated returns copies of pts with times cut to res, as Append stores them.
func truncated(pts []Point, res time.Duration) []Point {
	out := slices.Clone(pts)
	for i := range out {
		out[i].At = out[i].At.Truncate(res)
	}
	return out
}

// appendAll appends pts to series.
func appendAll(db *DB, series string, pts []Point) {
	for _, p := range pts {
		db.Append(series, p)
	}
}

func TestNightRoundTripAcrossReopen(t *testing.T) {
	path := filepath.Join(t.TempDir(), "night.db")
	db, err := Open(path, Options{})
	if err != nil {
		t.Fatal(err)
	}
	data := night()
	for name, pts := range data {
		for i, p := range pts[:5000] { // flush every 100 points, as a poller loop would every few seconds
			db.Append(name, p)
			if i%100 == 99 {
				if err := db.Flush(); err != nil {
					t.Fatal(err)
				}
			}
		}
		appendAll(db, name, pts[5000:]) // the rest in one go
	}
	if err := db.Close(); err != nil {
		t.Fatal(err)
	}
	db, err = Open(path, Options{ReadOnly: true})
	if err != nil {
		t.Fatal(err)
	}
	defer db.Close()
	names, err := db.Series()
	if err != nil || !slices.Equal(names, []string{"chamber-ion", "foreline", "heater-tc"}) {
		t.Fatalf("Series() = %v, %v", names, err)
	}
	for name, pts := range data {
		want := truncated(pts, DefaultResolution) // the default resolution cuts the sub-ms jitter
		slices.SortStableFunc(want, func(a, b Point) int { return a.At.Compare(b.At) })
		samePoints(t, all(t, db, name), want)
		if n, err := db.Count(name); err != nil || n != len(want) {
			t.Errorf("Count(%q) = %d, %v; want %d", name, n, err, len(want))
		}
	}
}

func TestRangeBoundsIncludeFromExcludeTo(t *testing.T) {
	db := openTemp(t, Options{})
	pts := make([]Point, 3000) // spans three chunks
	for i := range pts {
		pts[i] = Point{At: nightStart.Add(time.Duration(i) * time.Second), Raw: float64(i)}
	}
	appendAll(db, "g", pts[:2500])
	if err := db.Flush(); err != nil {
		t.Fatal(err)
	}
	appendAll(db, "g", pts[2500:]) // left buffered: Range must see them too
	cases := []struct{ from, to int }{{0, 3000}, {0, 1}, {1023, 1025}, {1024, 1024}, {2000, 2600}, {2999, 3000},
		{2500, 2501}, {5, 4}, {-10, 10}, {2990, 4000}}
	for _, c := range cases {
		var got []Point
		err := db.Range("g", nightStart.Add(time.Duration(c.from)*time.Second), nightStart.Add(time.Duration(c.to)*time.Second),
			func(p Point) bool { got = append(got, p); return true })
		if err != nil {
			t.Fatal(err)
		}
		lo, hi := max(c.from, 0), min(c.to, 3000)
		want := []Point{}
		if hi > lo {
			want = pts[lo:hi]
		}
		samePoints(t, got, want)
	}
	n := 0 // stop early
	db.Range("g", minTime, maxTime, func(Point) bool { n++; return n < 7 })
	if n != 7 {
		t.Errorf("Range called fn %d times after it returned false on the 7th", n)
	}
}

func TestOutOfOrderAndDuplicatesAreKeptInTimeOrder(t *testing.T) {
	db := openTemp(t, Options{})
	at := func(s int) time.Time { return nightStart.Add(time.Duration(s) * time.Second) }
	var want []Point
	for i := range 3000 {
		want = append(want, Point{At: at(i * 2), Raw: float64(i)})
	}
	appendAll(db, "g", want)
	if err := db.Flush(); err != nil {
		t.Fatal(err)
	}
	// Late points land between stored ones, before the first, at duplicate
	// times (after the stored point with that time), in several flushes.
	late := []Point{{At: at(-5), Raw: -5}, {At: at(3), Raw: 1e6}, {At: at(3), Raw: 2e6}, {At: at(2048), Raw: 3e6},
		{At: at(4001), Raw: 4e6}, {At: at(9000), Raw: 5e6}, {At: at(0), Raw: 6e6}}
	for i, p := range late {
		db.Append("g", p)
		if i%2 == 0 {
			if err := db.Flush(); err != nil {
				t.Fatal(err)
			}
		}
	}
	want = append(want, late...)
	slices.SortStableFunc(want, func(a, b Point) int { return a.At.Compare(b.At) })
	samePoints(t, all(t, db, "g"), want)
	if err := db.Flush(); err != nil {
		t.Fatal(err)
	}
	samePoints(t, all(t, db, "g"), want)

	var times []time.Time // chunks must not overlap: keys unique and increasing
	db.Bolt().View(func(tx *bolt.Tx) error {
		return tx.Bucket(bucketSeries).Bucket([]byte("g")).ForEach(func(k, v []byte) error {
			h, err := readHead(v)
			if err != nil {
				t.Fatal(err)
			}
			kt, _ := keyTime(k)
			if kt != h.first {
				t.Errorf("chunk key %d but first point %d", kt, h.first)
			}
			if len(times) > 0 && time.Unix(0, h.first).Before(times[len(times)-1]) {
				t.Errorf("chunk at %d starts before the previous chunk ends", h.first)
			}
			times = append(times, time.Unix(0, h.last))
			return nil
		})
	})
}

func TestManyPointsWithOneTime(t *testing.T) {
	db := openTemp(t, Options{})
	var want []Point
	for i := range 2500 {
		want = append(want, Point{At: nightStart, Raw: float64(i)})
	}
	appendAll(db, "stuck-clock", want)
	if err := db.Flush(); err != nil {
		t.Fatal(err)
	}
	samePoints(t, all(t, db, "stuck-clock"), want)
}

func TestConcurrentAppendAndFlush(t *testing.T) {
	db := openTemp(t, Options{})
	const writers, each = 8, 2000
	var wg sync.WaitGroup
	for w := range writers {
		wg.Go(func() {
			for i := range each {
				db.Append("g", Point{At: nightStart.Add(time.Duration(i) * time.Millisecond), Raw: float64(w), Calibration: uint32(i)})
			}
		})
	}
	stop := make(chan struct{})
	var fwg sync.WaitGroup
	fwg.Go(func() {
		for {
			select {
			case <-stop:
				return
			default:
			}
			if err := db.Flush(); err != nil {
				t.Error(err)
				return
			}
			db.Range("g", minTime, maxTime, func(Point) bool { return true })
		}
	})
	wg.Wait()
	close(stop)
	fwg.Wait()
	got := all(t, db, "g")
	if len(got) != writers*each {
		t.Fatalf("got %d points, want %d", len(got), writers*each)
	}
	perWriter := map[float64][]uint32{}
	for _, p := range got {
		perWriter[p.Raw] = append(perWriter[p.Raw], p.Calibration)
	}
	for w, seq := range perWriter { // each writer's points keep their order
		if len(seq) != each || !slices.IsSorted(seq) {
			t.Errorf("writer %v: %d points, sorted %v", w, len(seq), slices.IsSorted(seq))
		}
	}
	if err := db.Flush(); err != nil {
		t.Fatal(err)
	}
	if s := db.Stats(); s.Written != writers*each || s.Buffered != 0 {
		t.Errorf("Stats: written %d buffered %d", s.Written, s.Buffered)
	}
}

func TestLockedFileGivesClearError(t *testing.T) {
	path := filepath.Join(t.TempDir(), "busy.db")
	db, err := Open(path, Options{})
	if err != nil {
		t.Fatal(err)
	}
	defer db.Close()
	for _, ro := range []bool{false, true} {
		_, err = Open(path, Options{Timeout: 50 * time.Millisecond, ReadOnly: ro})
		want := path + " is in use by another holdfast (a running daemon holds it); stop it or ask its HTTP API"
		if err == nil || err.Error() != want {
			t.Fatalf("second Open (read-only %v): got %v, want %q", ro, err, want)
		}
		if !errors.Is(err, berrors.ErrTimeout) {
			t.Errorf("error does not wrap bbolt's ErrTimeout: %v", err)
		}
	}
}

func TestOpenRefusesFilesItCannotRead(t *testing.T) {
	dir := t.TempDir()
	foreign := filepath.Join(dir, "other.db")
	b, _ := bolt.Open(foreign, 0o600, nil)
	b.Update(func(tx *bolt.Tx) error { _, err := tx.CreateBucket([]byte("stuff")); return err })
	b.Close()
	newer := filepath.Join(dir, "newer.db")
	db, err := Open(newer, Options{})
	if err != nil {
		t.Fatal(err)
	}
	db.Bolt().Update(func(tx *bolt.Tx) error { return tx.Bucket(bucketMeta).Put(keySchema, []byte{9}) })
	db.Close()
	cases := []struct {
		path string
		opt  Options
		want string
	}{
		{foreign, Options{}, "not a holdfast store"},
		{newer, Options{}, "schema version 9; this holdfast reads up to 3"},
		{filepath.Join(dir, "missing.db"), Options{ReadOnly: true}, "no such file"},
	}
	for _, c := range cases {
		_, err := Open(c.path, c.opt)
		if err == nil || !strings.Contains(err.Error(), c.want) || !strings.Contains(err.Error(), c.path) {
			t.Errorf("Open(%s): got %v, want an error naming the file and saying %q", c.path, err, c.want)
		}
	}
}

func TestAppendRejectsBadPoints(t *testing.T) {
	db := openTemp(t, Options{})
	db.Append("", Point{At: nightStart})
	db.Append("g", Point{}) // zero time: year 1
	db.Append("g", Point{At: nightStart, Raw: 1})
	s := db.Stats()
	if s.Rejected != 2 || s.Buffered != 1 || s.LastRejected == nil || !strings.Contains(s.LastRejected.Error(), "1678-2262") {
		t.Fatalf("Stats after bad appends: %+v", s)
	}
	if err := db.Flush(); err != nil {
		t.Fatal(err)
	}
	if n, _ := db.Count("g"); n != 1 {
		t.Fatalf("Count = %d, want 1", n)
	}
}

func TestSpecialFloatsSurviveTheStore(t *testing.T) {
	db := openTemp(t, Options{})
	var want []Point
	for i, v := range specials {
		want = append(want, Point{At: nightStart.Add(time.Duration(i) * time.Second), Raw: v, Value: -v, Quality: uint8(i)})
	}
	want = append(want, Point{At: nightStart.Add(time.Hour), Raw: math.NaN(), Value: math.Inf(-1)})
	appendAll(db, "odd", want)
	if err := db.Flush(); err != nil {
		t.Fatal(err)
	}
	samePoints(t, all(t, db, "odd"), want)
}

func TestCloseFlushesAndFurtherCallsFail(t *testing.T) {
	path := filepath.Join(t.TempDir(), "c.db")
	db, err := Open(path, Options{})
	if err != nil {
		t.Fatal(err)
	}
	db.Append("g", Point{At: nightStart, Raw: 1})
	if err := db.Close(); err != nil {
		t.Fatal(err)
	}
	if err := db.Flush(); !errors.Is(err, ErrClosed) {
		t.Errorf("Flush after Close: %v", err)
	}
	if _, err := db.Count("g"); !errors.Is(err, ErrClosed) {
		t.Errorf("Count after Close: %v", err)
	}
	db.Append("g", Point{At: nightStart, Raw: 2})
	if db.Stats().Rejected != 1 {
		t.Error("Append after Close was not counted as rejected")
	}
	db, err = Open(path, Options{})
	if err != nil {
		t.Fatal(err)
	}
	defer db.Close()
	if got := all(t, db, "g"); len(got) != 1 || got[0].Raw != 1 {
		t.Fatalf("after reopen: %+v", got)
	}
}
