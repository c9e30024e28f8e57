package report

import (
	"bytes"
	"fmt"
	"io"
	"math"
	"os"
	"path/filepath"
	"slices"
	"strings"
	"testing"
	"time"

	"holdfast/calib"
)

func TestFindPumpDown(t *testing.T) {
	t0 := time.Date(2026, 3, 1, 20, 0, 0, 0, time.UTC)
	at := func(min int) time.Time { return t0.Add(time.Duration(min) * time.Minute) }
	ok := func(min int, pa float64) Point { return Point{At: at(min), Value: pa} }
	// Invented record, worked by hand against the rule (start 900 mbar =
	// 90000 Pa, target 1 Pa): pumping begins at minute 2 (first reading at
	// or below start), a vent at minute 10 (over-range) starts the clock
	// again, pumping begins anew at minute 12, a sensor fault at minute 20
	// says nothing, and 0.8 Pa at minute 47 reaches the target: 35 min.
	pts := []Point{ok(0, 101000), ok(2, 85000), ok(5, 400), {At: at(10), Quality: calib.QualityOverRange},
		ok(12, 70000), ok(15, 900), {At: at(20), Quality: calib.QualitySensorFault}, ok(30, 3), ok(47, 0.8), ok(50, 0.5)}
	began, reached, before := FindPumpDown(slices.Values(pts), 90000, 1)
	if !began.Equal(at(12)) || !reached.Equal(at(47)) || before {
		t.Errorf("began %v reached %v before %v; want minute 12, minute 47, false", began, reached, before)
	}
	if got := (PumpDown{Began: began, Reached: reached}).Took(); got != 35*time.Minute {
		t.Errorf("took %s, want 35m", got)
	}
	// Already below start when the record begins: the time is a lower bound.
	began, reached, before = FindPumpDown(slices.Values(pts[5:]), 90000, 1)
	if !began.Equal(at(15)) || !reached.Equal(at(47)) || !before {
		t.Errorf("began %v reached %v before %v; want minute 15, minute 47, true", began, reached, before)
	}
	// Under-range counts as below the target (the rule reads it as 0).
	_, reached, _ = FindPumpDown(slices.Values([]Point{ok(0, 50000), {At: at(3), Quality: calib.QualityUnderRange}}), 90000, 1e-3)
	if !reached.Equal(at(3)) {
		t.Errorf("under-range: reached %v, want minute 3", reached)
	}
	if _, reached, _ = FindPumpDown(slices.Values(pts[:4]), 90000, 1); !reached.IsZero() {
		t.Errorf("not reached: got %v", reached)
	}
}

func TestSummariesAndCounts(t *testing.T) {
	from := time.Date(2026, 3, 1, 19, 0, 0, 0, time.UTC)
	at := func(h float64) time.Time { return from.Add(time.Duration(h * float64(time.Hour))) }
	n := &Night{From: from, To: at(12), Series: []Series{
		{Gauge: "p", Kind: "pressure", Points: []Point{{At: at(1), Value: 5}, {At: at(2), Value: 0.2},
			{At: at(3), Value: 0.7}, {At: at(4), Quality: calib.QualityOff}}},
		{Gauge: "silent", Kind: "pressure"},
		{Gauge: "t", Kind: "temperature", Points: []Point{{At: at(1), Value: 20}, {At: at(5), Value: 151.5}, {At: at(9), Value: 40}}},
	}, Alarms: []AlarmPeriod{
		{Alarm: "a", Raised: at(-2), Cleared: at(1)}, // raised before the period, cleared in it
		{Alarm: "b", Raised: at(2), Cleared: at(3)},
		{Alarm: "c", Raised: at(6)}, // still active
	}}
	s := n.Summaries()
	if s[0].Min != 0.2 || s[0].Final != 0.7 || s[0].Bad != 1 || s[0].LastStatus != calib.QualityOff {
		t.Errorf("p: %+v; want min 0.2, final 0.7, 1 bad, last off", s[0])
	}
	if !s[1].NoData || !math.IsNaN(s[1].Final) {
		t.Errorf("silent: %+v; want no data", s[1])
	}
	if v, who, _ := n.MaxTemperature(); v != 151.5 || who != "t" {
		t.Errorf("max temperature %g on %s, want 151.5 on t", v, who)
	}
	if c := n.Counts(); c != (AlarmCounts{Raised: 2, Cleared: 2, Active: 1}) {
		t.Errorf("counts %+v, want 2 raised (b, c), 2 cleared (a, b), 1 active (c)", c)
	}
	if got := n.alarmNames(); !slices.Equal(got, []string{"a", "b", "c"}) {
		t.Errorf("alarm lanes %q", got)
	}
}

func TestDecadeTicks(t *testing.T) {
	// log10 of 3e-6 … 2e2: decades 10^-5 … 10^2 fall inside, each labelled.
	var labels []string
	minors := 0
	for _, tk := range (decadeTicks{}).Ticks(math.Log10(3e-6), math.Log10(2e2)) {
		if tk.Label != "" {
			labels = append(labels, tk.Label)
		} else {
			minors++
		}
	}
	want := []string{"10^-5", "10^-4", "10^-3", "10^-2", "10^-1", "10^0", "10^1", "10^2"}
	if !slices.Equal(labels, want) {
		t.Errorf("labels %q, want %q", labels, want)
	}
	// Minor ticks strictly inside the range: 4…9e-6 (6; 3e-6 is the
	// bound), 2…9 in each decade 10^-5 … 10^1 (7 × 8 = 56), none in 10^2
	// (2e2 is the bound): 62.
	if minors != 6+56 {
		t.Errorf("%d minor ticks, want 62", minors)
	}
}

func TestRunsBreakAtGapsAndBadReadings(t *testing.T) {
	t0 := time.Date(2026, 3, 1, 0, 0, 0, 0, time.UTC)
	sec := func(s int) time.Time { return t0.Add(time.Duration(s) * time.Second) }
	s := Series{Kind: "pressure", MaxStep: 3 * time.Second, Points: []Point{
		{At: sec(0), Value: 1}, {At: sec(1), Value: 1}, {At: sec(2), Value: 1}, // run 1
		{At: sec(10), Value: 1}, {At: sec(11), Value: 1}, // 8 s gap: run 2
		{At: sec(12), Quality: calib.QualitySensorFault}, // not ok: breaks
		{At: sec(13), Value: 1},                          // run 3, a single point
		{At: sec(14), Value: 0},                          // zero on a log axis: not drawable
		{At: sec(15), Value: 2}, {At: sec(16), Value: 2}, // run 4
	}}
	lines, bad := runs(s)
	var lens []int
	for _, l := range lines {
		lens = append(lens, len(l))
	}
	if !slices.Equal(lens, []int{3, 2, 1, 2}) || len(bad) != 2 {
		t.Errorf("runs of %v and %d markers; want [3 2 1 2] and 2", lens, len(bad))
	}
}

// Odd nights still render in every format: nothing stored at all, ten
// minutes, a week, and a dozen alarms.
func TestRenderEdgeCases(t *testing.T) {
	base := testNight(t)
	empty := *base
	empty.Series = []Series{{Gauge: "silent", Kind: "pressure"}, {Gauge: "tc", Kind: "temperature"}}
	empty.Alarms, empty.HoldTests, empty.PumpDowns = nil, nil, nil
	short := *base
	short.To = short.From.Add(10 * time.Minute)
	week := *base
	week.To = week.From.Add(7 * 24 * time.Hour)
	busy := *base
	busy.Alarms = nil
	for i := range 12 {
		busy.Alarms = append(busy.Alarms, AlarmPeriod{Alarm: fmt.Sprintf("alarm-%02d", i), Severity: severities[i%4],
			Raised: base.From.Add(time.Duration(i) * time.Hour), Cleared: base.From.Add(time.Duration(i)*time.Hour + 40*time.Minute)})
	}
	for name, n := range map[string]*Night{"empty": &empty, "short": &short, "week": &week, "busy": &busy} {
		for _, f := range Formats {
			var buf bytes.Buffer
			if err := Write(&buf, n, f); err != nil {
				t.Errorf("%s %s: %v", name, f, err)
			}
			if *keep != "" && f == "png" {
				os.WriteFile(filepath.Join(*keep, name+".png"), buf.Bytes(), 0o644)
			}
		}
	}
	// The short night holds only its first ten minutes: the Pirani's
	// 1e5·e^(-6h) Pa, read every 30 s, falls from 1000 mbar to its last
	// reading at 19:09:30, 1000·e^(-6 × 9.5/60) = 1000·e^(-0.95) = 387
	// mbar; the alarm raised at 19:10 is outside, and none is active.
	var buf bytes.Buffer
	if err := Write(&buf, &short, "html"); err != nil {
		t.Fatal(err)
	}
	if h := buf.String(); !strings.Contains(h, "387 mbar at 19:09:30") || !strings.Contains(h, "0 raised, 0 cleared") || strings.Contains(h, "ion-gauge-silent") {
		t.Errorf("the short night shows what lies outside it:\n%s", h[:strings.Index(h, "<figure>")])
	}
	bad := *base
	bad.To = bad.From
	if err := Write(io.Discard, &bad, "svg"); err == nil {
		t.Error("an empty period rendered; want an error")
	}
}

var severities = []string{"low", "medium", "high", "critical"}

func TestDuration(t *testing.T) {
	for d, want := range map[time.Duration]string{
		42 * time.Second: "42 s", 12*time.Minute + 30*time.Second: "12 min 30 s", 65 * time.Minute: "1 h 05 min",
		47*time.Hour + 59*time.Minute: "47 h 59 min", 7 * 24 * time.Hour: "7 d 00 h", 76 * time.Hour: "3 d 04 h",
	} {
		if got := Duration(d); got != want {
			t.Errorf("Duration(%s) = %q, want %q", d, got, want)
		}
	}
}
