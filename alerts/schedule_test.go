package alerts

import (
	"testing"
	"time"
	_ "time/tzdata" // Europe/Berlin without the host's zone files
)

// Daily at 03:00 in a zone one hour east of UTC, and every 6 h on the
// UTC quarter days. A run at exactly the scheduled time is not "after" it.
func TestScheduleNext(t *testing.T) {
	cet := time.FixedZone("UTC+1", 3600)
	daily := Schedule{Every: 24 * time.Hour, At: 3 * time.Hour, HasAt: true, Loc: cet}
	sixHourly := Schedule{Every: 6 * time.Hour}
	for _, c := range []struct {
		s        Schedule
		from     time.Time
		want     time.Time
		describe string
	}{
		{daily, time.Date(2026, 3, 1, 22, 0, 0, 0, time.UTC), time.Date(2026, 3, 2, 2, 0, 0, 0, time.UTC), "evening: next morning"},
		{daily, time.Date(2026, 3, 2, 2, 0, 0, 0, time.UTC), time.Date(2026, 3, 3, 2, 0, 0, 0, time.UTC), "at the time: tomorrow"},
		{daily, time.Date(2026, 3, 1, 1, 59, 0, 0, time.UTC), time.Date(2026, 3, 1, 2, 0, 0, 0, time.UTC), "a minute before"},
		{sixHourly, time.Date(2026, 3, 1, 22, 0, 0, 0, time.UTC), time.Date(2026, 3, 2, 0, 0, 0, 0, time.UTC), "6 h: midnight UTC"},
		{sixHourly, time.Date(2026, 3, 2, 6, 0, 0, 0, time.UTC), time.Date(2026, 3, 2, 12, 0, 0, 0, time.UTC), "6 h: at a run"},
	} {
		if got := c.s.Next(c.from); !got.Equal(c.want) {
			t.Errorf("%s: Next(%s) = %s, want %s", c.describe, c.from, got.UTC(), c.want)
		}
	}
}

// 03:00 stays 03:00 on the wall clock across the spring change. Summer time
// in the EU begins at 01:00 UTC on the last Sunday of March (Directive
// 2000/84/EC, Art. 2), 29 March in 2026: Berlin's 03:00 is 02:00 UTC on the
// 28th and 01:00 UTC on the 29th and 30th.
func TestScheduleAcrossDaylightSaving(t *testing.T) {
	berlin, err := time.LoadLocation("Europe/Berlin")
	if err != nil {
		t.Fatal(err)
	}
	s := Schedule{Every: 24 * time.Hour, At: 3 * time.Hour, HasAt: true, Loc: berlin}
	run := time.Date(2026, 3, 27, 12, 0, 0, 0, time.UTC)
	var got []time.Time
	for range 3 {
		run = s.Next(run)
		got = append(got, run.UTC())
	}
	want := []time.Time{time.Date(2026, 3, 28, 2, 0, 0, 0, time.UTC), time.Date(2026, 3, 29, 1, 0, 0, 0, time.UTC),
		time.Date(2026, 3, 30, 1, 0, 0, 0, time.UTC)}
	for i := range want {
		if !got[i].Equal(want[i]) {
			t.Errorf("run %d at %s UTC, want %s", i, got[i], want[i])
		}
	}
}

// Every 2 days falls on the same days whenever the daemon starts: starts
// on either day of a pair agree, and runs are 48 h apart.
func TestScheduleEveryOtherDayIsStable(t *testing.T) {
	s := Schedule{Every: 48 * time.Hour, At: 90 * time.Minute, HasAt: true}
	a := s.Next(time.Date(2026, 5, 10, 12, 0, 0, 0, time.UTC))
	b := s.Next(time.Date(2026, 5, 11, 12, 0, 0, 0, time.UTC))
	if !a.Equal(b) && !a.Add(48*time.Hour).Equal(b) && !b.Add(48*time.Hour).Equal(a) {
		t.Fatalf("starts a day apart chose runs %s and %s: not on one 2-day cycle", a, b)
	}
	if a.Hour() != 1 || a.Minute() != 30 {
		t.Errorf("run at %s, want 01:30", a)
	}
	// The documented anchor: day 0 is 1970-01-01, so the 1st and 3rd run.
	if n := s.Next(time.Date(1970, 1, 1, 12, 0, 0, 0, time.UTC)); !n.Equal(time.Date(1970, 1, 3, 1, 30, 0, 0, time.UTC)) {
		t.Errorf("after noon on 1970-01-01: %s, want 1970-01-03 01:30 UTC", n)
	}
	if n := s.Next(a); n.Sub(a) != 48*time.Hour {
		t.Errorf("runs %s apart, want 48h", n.Sub(a))
	}
}

func TestScheduleValidate(t *testing.T) {
	for _, c := range []struct {
		s  Schedule
		ok bool
	}{
		{Schedule{Every: 24 * time.Hour, At: 3 * time.Hour, HasAt: true}, true},
		{Schedule{Every: 6 * time.Hour}, true},
		{Schedule{Every: 30 * time.Second}, false},
		{Schedule{Every: 36 * time.Hour, At: time.Hour, HasAt: true}, false},
		{Schedule{Every: 24 * time.Hour, At: 25 * time.Hour, HasAt: true}, false},
	} {
		if err := c.s.Validate(); (err == nil) != c.ok {
			t.Errorf("%+v: Validate() = %v, want ok %v", c.s, err, c.ok)
		}
	}
}
