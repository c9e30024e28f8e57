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
