package alerts

import (
	"errors"
	"fmt"
	"time"
)

const day = 24 * time.Hour

// A Schedule says when scheduled hold tests run. With a time of day (HasAt),
// they run at At after local midnight in Loc, every Every (a whole number
// of days, counted from 1970-01-01 on the local calendar, so "every 2 days"
// falls on the same days whenever the daemon starts). Without one they run
// every Every on the multiples of Every since the Unix epoch (every 6 h is
// 00:00, 06:00, 12:00 and 18:00 UTC).
//
// Times of day follow the wall clock across daylight-saving changes: 03:00
// stays 03:00. A time of day that does not exist on a given day (02:30 on
// the night the clocks go forward) runs when time.Date puts it, an hour
// later; one that happens twice (when they go back) runs once, at the one of
// the two that time.Date picks.
type Schedule struct {
	Every time.Duration
	At    time.Duration // from local midnight, 0 to 24 h
	HasAt bool
	Loc   *time.Location // nil is UTC
}

// Validate says what is wrong with the schedule, if anything.
func (s Schedule) Validate() error {
	var errs []error
	if s.Every < time.Minute {
		errs = append(errs, fmt.Errorf("every: want at least 1 min, got %s", s.Every))
	}
	if s.HasAt {
		if s.Every%day != 0 {
			errs = append(errs, fmt.Errorf("every: with a time of day, want whole days such as 24h or 7d, got %s", s.Every))
		}
		if s.At < 0 || s.At >= day {
			errs = append(errs, fmt.Errorf("at: want a time of day from 00:00 to 23:59, got %s", s.At))
		}
	}
	return errors.Join(errs...)
}

// Next returns the first run strictly after t. The schedule must be valid.
func (s Schedule) Next(t time.Time) time.Time {
	if !s.HasAt {
		return t.Truncate(s.Every).Add(s.Every)
	}
	loc := s.Loc
	if loc == nil {
		loc = time.UTC
	}
	lt := t.In(loc)
	days := int64(s.Every / day)
	y, m, d := lt.Date()
	for i := range days + 2 {
		date := time.Date(y, m, d+int(i), 0, 0, 0, 0, time.UTC)
		if (date.Unix()/int64(day/time.Second))%days != 0 {
			continue
		}
		yy, mm, dd := date.Date()
		h, min, sec := int(s.At/time.Hour), int(s.At%time.Hour/time.Minute), int(s.At%time.Minute/time.Second)
		run := time.Date(yy, mm, dd, h, min, sec, 0, loc)
		if run.After(t) {
			return run
		}
	}
	return t.Add(s.Every) // not reached for a valid schedule
}
