package store

import (
	"strings"
	"testing"
	"time"
)

func TestTimesAreCutToTheResolution(t *testing.T) {
	at := time.Date(2031, 3, 14, 22, 0, 0, 123456789, time.UTC)
	before := time.Date(1969, 12, 31, 23, 59, 59, 987654321, time.UTC) // before 1970: cut towards the past too
	// Expected times by hand: .123456789 cut to 1 ms is .123, to 10 ms .12,
	// to 1 s .0; 59.987654321 s cut to 1 ms is 59.987, to 10 ms 59.98, to 1 s 59.
	cases := []struct {
		res       time.Duration
		want, pre time.Time
	}{
		{0, at.Add(-456789), before.Add(-654321)}, // the default, 1 ms
		{10 * time.Millisecond, at.Add(-3456789), before.Add(-7654321)},
		{time.Second, at.Add(-123456789), before.Add(-987654321)},
		{time.Nanosecond, at, before},
	}
	for _, c := range cases {
		db := openTemp(t, Options{Resolution: c.res})
		db.Append("g", Point{At: at, Raw: 1})
		db.Append("g", Point{At: before, Raw: 2})
		if err := db.Flush(); err != nil {
			t.Fatal(err)
		}
		got := all(t, db, "g")
		if len(got) != 2 || !got[0].At.Equal(c.pre) || !got[1].At.Equal(c.want) {
			t.Errorf("resolution %s: got %v, want times %s and %s", c.res, got, c.pre, c.want)
		}
	}
}

func TestOpenRefusesABadResolution(t *testing.T) {
	for _, res := range []time.Duration{-time.Millisecond, 3 * time.Millisecond, 2 * time.Second, 300 * time.Microsecond} {
		_, err := Open(t.TempDir()+"/r.db", Options{Resolution: res})
		if err == nil || !strings.Contains(err.Error(), "divide 1s evenly") {
			t.Errorf("resolution %s: got %v, want a refusal saying it must divide 1s", res, err)
		}
	}
}

func TestACutBelowTheEarliestTimeIsRefused(t *testing.T) {
	// The earliest time the store keeps is -2^63 ns; cut to 1 ms it would
	// fall before that, so Append refuses it rather than wrap around.
	db := openTemp(t, Options{})
	db.Append("g", Point{At: minTime, Raw: 1})
	if st := db.Stats(); st.Rejected != 1 || !strings.Contains(st.LastRejected.Error(), "outside 1678-2262") {
		t.Fatalf("Rejected %d, %v; want the point refused for its time", st.Rejected, st.LastRejected)
	}
	db.Append("g", Point{At: minTime.Add(time.Millisecond), Raw: 2})
	if err := db.Flush(); err != nil {
		t.Fatal(err)
	}
	if got := all(t, db, "g"); len(got) != 1 || got[0].Raw != 2 || got[0].At.Before(minTime) {
		t.Fatalf("got %v; want the point a millisecond later, cut to a time in range", got)
	}
}
