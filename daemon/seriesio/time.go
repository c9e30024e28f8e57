package seriesio

import (
	"fmt"
	"math"
	"strconv"
	"strings"
	"time"
)

// ParseTime reads a time as queries write it: RFC 3339 (2026-03-02T14:05:00Z,
// fractions allowed), Unix seconds (1772460300 or 1772460300.25), "now", or
// an offset from now: -8h, -90m, -1h30m, -2d (a day is 24 h), +10m.
func ParseTime(s string, now time.Time) (time.Time, error) {
	s = strings.TrimSpace(s)
	switch {
	case s == "":
		return time.Time{}, fmt.Errorf("empty time; want RFC 3339, Unix seconds, now or an offset such as -8h")
	case s == "now":
		return now, nil
	case s[0] == '-' || s[0] == '+':
		if d, err := parseOffset(s[1:]); err == nil {
			if s[0] == '-' {
				d = -d
			}
			return now.Add(d), nil
		}
	}
	if t, err := time.Parse(time.RFC3339Nano, s); err == nil {
		return t, nil
	}
	if f, err := strconv.ParseFloat(s, 64); err == nil && !math.IsInf(f, 0) && !math.IsNaN(f) && math.Abs(f) < 9e9 {
		sec := math.Floor(f)
		return time.Unix(int64(sec), int64(math.Round((f-sec)*1e9))).UTC(), nil
	}
	return time.Time{}, fmt.Errorf("time %q: want RFC 3339 (2026-03-02T14:05:00Z), Unix seconds (1772460300), now, or an offset such as -8h, -90m, -2d", s)
}

// parseOffset reads a Go duration that may also use d for 24 h ("2d", "1d12h").
func parseOffset(s string) (time.Duration, error) {
	var days time.Duration
	if i := strings.IndexByte(s, 'd'); i > 0 {
		n, err := strconv.ParseUint(s[:i], 10, 16)
		if err != nil {
			return 0, err
		}
		days, s = time.Duration(n)*24*time.Hour, s[i+1:]
		if s == "" {
			return days, nil
		}
	}
	d, err := time.ParseDuration(s)
	if err != nil || d < 0 {
		return 0, fmt.Errorf("bad offset %q", s)
	}
	return days + d, nil
}

// parseImportTime reads the time column of an import: RFC 3339 or integer
// Unix milliseconds.
func parseImportTime(s string) (time.Time, error) {
	if t, err := time.Parse(time.RFC3339Nano, s); err == nil {
		return t.UTC(), nil
	}
	if ms, err := strconv.ParseInt(s, 10, 64); err == nil {
		return time.UnixMilli(ms).UTC(), nil
	}
	return time.Time{}, fmt.Errorf("time %q: want RFC 3339 (2026-03-02T14:05:00.123Z) or Unix milliseconds (1772460300123)", s)
}

// formatTime writes a time as exports do: RFC 3339 in UTC with every
// nanosecond that is not zero.
func formatTime(t time.Time) string { return t.UTC().Format(time.RFC3339Nano) }
