package report

import (
	"iter"
	"math"
	"slices"
	"time"

	"holdfast/calib"
)

// A Night is everything one report shows. Values are SI (Pa, °C); the
// units say how to show them.
type Night struct {
	Chamber     string
	From, To    time.Time // the period; To is exclusive
	Location    *time.Location
	Pressure    calib.Unit // display unit of the pressure panel
	Temperature calib.Unit // display unit of the temperature panel
	Series      []Series   // in the order to draw them
	Alarms      []AlarmPeriod
	HoldTests   []HoldTest
	PumpDowns   []PumpDown
	Bakes       []Bake // the bakes that overlap the period
	Generated   time.Time
	Notes       []string // what the gatherer could not read, for the header
}

// A Series is one gauge's points over the period.
type Series struct {
	Gauge string
	Kind  string // pressure or temperature
	// MaxStep is the longest spacing of two points still joined by a line;
	// further apart, the line breaks (the gauge was not read, or not stored).
	MaxStep time.Duration
	Points  []Point // in time order
	// Stored and NotOK count every sample of the period, when the gatherer
	// counted them (Points may be a reduction); zero means count Points.
	Stored, NotOK int
}

// A Point is one stored sample; Value is meaningful only when
// Quality.HasValue() (ok or extrapolated).
type Point struct {
	At      time.Time
	Value   float64
	Quality calib.Quality
}

// ok reports whether p can be drawn.
func (p Point) ok(kind string) bool {
	if !p.Quality.HasValue() || math.IsNaN(p.Value) || math.IsInf(p.Value, 0) {
		return false
	}
	return kind != "pressure" || p.Value > 0
}

// An AlarmPeriod is one activation of one alarm: from raised to cleared,
// or still active (Cleared zero).
type AlarmPeriod struct {
	Alarm    string
	Gauge    string
	Severity string
	Raised   time.Time
	Cleared  time.Time // zero: still active at the end of the period
}

// Active reports whether the alarm was still active when the period ended.
func (a AlarmPeriod) Active() bool { return a.Cleared.IsZero() }

// A HoldTest is one pressure-rise test in the period.
type HoldTest struct {
	ID       string
	Gauge    string
	From, To time.Time // the recording
	Verdict  string    // pass, fail, inconclusive, or "" (no allowed leak rate)
	LeakRate float64   // Pa·m³/s; NaN when none
	Unit     calib.Unit
	Summary  string
}

// A PumpDown is a pump_down rule's target and when the gauge got there.
type PumpDown struct {
	Alarm  string
	Gauge  string
	Start  float64 // Pa: pumping has begun below this
	Target float64 // Pa
	Within time.Duration
	// Began is when the gauge last fell below Start before reaching
	// Target; BeganBefore says it already read below Start when the
	// period began, so the time taken is a lower bound.
	Began       time.Time
	BeganBefore bool
	Reached     time.Time // zero: not reached in the period
}

// Took is the time from Began to Reached; 0 when not reached.
func (p PumpDown) Took() time.Duration {
	if p.Reached.IsZero() || p.Began.IsZero() {
		return 0
	}
	return p.Reached.Sub(p.Began)
}

// FindPumpDown follows the rule's logic over points (time order): pumping
// begins when the gauge reads at or below start, starts again whenever it
// reads above start (a vent), and is done at the first reading at or below
// target. Over-range counts as above start, under-range as below target;
// other not-ok readings say nothing.
func FindPumpDown(points iter.Seq[Point], start, target float64) (began, reached time.Time, beganBefore bool) {
	known := false // a reading that says where the pressure is came before
	for p := range points {
		v := p.Value
		switch p.Quality {
		case calib.QualityOK:
		case calib.QualityOverRange:
			v = math.Inf(1)
		case calib.QualityUnderRange:
			v = 0
		default:
			continue
		}
		switch {
		case v > start:
			began, beganBefore = time.Time{}, false
		case began.IsZero():
			began, beganBefore = p.At, !known
		}
		known = true
		if v <= target && !began.IsZero() {
			return began, p.At, beganBefore
		}
	}
	return began, time.Time{}, beganBefore
}

// A GaugeSummary is one gauge's line of the header.
type GaugeSummary struct {
	Gauge      string
	Kind       string
	Points     int // ok points drawn
	Bad        int // not-ok points drawn
	Stored     int // samples in the period (Series.Stored, else the points drawn)
	NotOK      int // of them not ok
	Min, Max   float64
	Final      float64 // the last ok value
	FinalAt    time.Time
	NoData     bool // nothing stored in the period: the gauge never answered
	LastStatus calib.Quality
}

// Summaries gives each series' numbers for the header.
func (n *Night) Summaries() []GaugeSummary {
	out := make([]GaugeSummary, 0, len(n.Series))
	for _, s := range n.Series {
		g := GaugeSummary{Gauge: s.Gauge, Kind: s.Kind, Min: math.Inf(1), Max: math.Inf(-1), Final: math.NaN(),
			NoData: len(s.Points) == 0}
		for _, p := range s.Points {
			if !p.ok(s.Kind) {
				g.Bad++
				g.LastStatus = p.Quality
				continue
			}
			g.Points++
			g.Min, g.Max = min(g.Min, p.Value), max(g.Max, p.Value)
			g.Final, g.FinalAt, g.LastStatus = p.Value, p.At, p.Quality // ok or extrapolated
		}
		g.Stored, g.NotOK = s.Stored, s.NotOK
		if g.Stored == 0 {
			g.Stored, g.NotOK = g.Points+g.Bad, g.Bad
		}
		out = append(out, g)
	}
	return out
}

// AlarmCounts are the header's alarm figures: raised and cleared within
// the period, and active when it ended.
type AlarmCounts struct{ Raised, Cleared, Active int }

// Counts counts the alarm periods' raises and clears inside the period.
func (n *Night) Counts() AlarmCounts {
	var c AlarmCounts
	in := func(t time.Time) bool { return !t.Before(n.From) && t.Before(n.To) }
	for _, a := range n.Alarms {
		if in(a.Raised) {
			c.Raised++
		}
		if !a.Cleared.IsZero() && in(a.Cleared) {
			c.Cleared++
		}
		if a.Active() {
			c.Active++
		}
	}
	return c
}

// MaxTemperature is the highest ok temperature of any gauge, with its
// gauge; NaN when there is none.
func (n *Night) MaxTemperature() (float64, string, time.Time) {
	best, who, at := math.NaN(), "", time.Time{}
	for _, s := range n.Series {
		if s.Kind != "temperature" {
			continue
		}
		for _, p := range s.Points {
			if p.ok(s.Kind) && !(p.Value <= best) {
				best, who, at = p.Value, s.Gauge, p.At
			}
		}
	}
	return best, who, at
}

// alarmNames lists the alarms in the order they were first raised.
func (n *Night) alarmNames() []string {
	as := slices.Clone(n.Alarms)
	slices.SortStableFunc(as, func(a, b AlarmPeriod) int { return a.Raised.Compare(b.Raised) })
	var names []string
	for _, a := range as {
		if !slices.Contains(names, a.Alarm) {
			names = append(names, a.Alarm)
		}
	}
	return names
}

func (n *Night) loc() *time.Location {
	if n.Location != nil {
		return n.Location
	}
	return time.UTC
}

// clipped is n restricted to its period: points in [From, To), the alarm
// periods and hold tests that overlap it, and an alarm cleared after To
// counted as still active (it was, when the period ended).
func (n *Night) clipped() *Night {
	c := *n
	in := func(t time.Time) bool { return !t.Before(n.From) && t.Before(n.To) }
	c.Series = make([]Series, len(n.Series))
	for i, s := range n.Series {
		s.Points = slices.DeleteFunc(slices.Clone(s.Points), func(p Point) bool { return !in(p.At) })
		c.Series[i] = s
	}
	c.Alarms = nil
	for _, a := range n.Alarms {
		if !a.Raised.Before(n.To) || !a.Cleared.IsZero() && a.Cleared.Before(n.From) {
			continue
		}
		if !a.Cleared.IsZero() && !a.Cleared.Before(n.To) {
			a.Cleared = time.Time{}
		}
		c.Alarms = append(c.Alarms, a)
	}
	c.HoldTests = slices.DeleteFunc(slices.Clone(n.HoldTests), func(h HoldTest) bool {
		return !h.From.Before(n.To) || !h.To.After(n.From)
	})
	return &c
}
