package report

import (
	"bytes"
	"flag"
	"math"
	"os"
	"path/filepath"
	"testing"
	"time"

	"holdfast/calib"
)

var keep = flag.String("keep", "", "write the rendered reports into this `directory` to look at them")

func unit(t testing.TB, name string, d calib.Dimension) calib.Unit {
	t.Helper()
	u, err := calib.ParseUnit(name, d)
	if err != nil {
		t.Fatal(err)
	}
	return u
}

// testNight is an invented twelve-hour night: a pump-down with two gaps
// (the link dropped for 40 min, and a spell of sensor faults), an
// ionisation gauge that never answered, a wall thermocouple, an alarm that
// cleared, one still active at the end, and a hold test.
func testNight(t testing.TB) *Night {
	from := time.Date(2026, 3, 1, 19, 0, 0, 0, time.UTC)
	to := from.Add(12 * time.Hour)
	n := &Night{Chamber: "bake-2", From: from, To: to, Location: time.UTC,
		Pressure: unit(t, "mbar", calib.Pressure), Temperature: unit(t, "C", calib.Temperature), Generated: to}
	var pir, tc []Point
	for s := 0; s < 12*3600; s += 30 {
		at := from.Add(time.Duration(s) * time.Second)
		h := float64(s) / 3600
		p := 1e5 * math.Exp(-h*6) // Pa, pumped from atmosphere
		p = max(p, 2e-3*(1+0.5*math.Sin(h)))
		q := calib.QualityOK
		switch {
		case h >= 3 && h < 3+40.0/60: // the link dropped: nothing stored
			continue
		case h >= 6 && h < 6.5: // sensor fault: stored, not ok
			q = calib.QualitySensorFault
		}
		pir = append(pir, Point{At: at, Value: p, Quality: q})
		if s%60 == 0 {
			temp := 22 + 128*math.Max(0, math.Min(1, (h-2)/2)) - 100*math.Max(0, math.Min(1, (h-8)/2))
			tc = append(tc, Point{At: at, Value: temp})
		}
	}
	n.Series = []Series{
		{Gauge: "chamber-pirani", Kind: "pressure", MaxStep: 90 * time.Second, Points: pir},
		{Gauge: "chamber-ion", Kind: "pressure", MaxStep: 10 * time.Second},
		{Gauge: "wall-tc", Kind: "temperature", MaxStep: 3 * time.Minute, Points: tc},
	}
	n.Alarms = []AlarmPeriod{
		{Alarm: "wall-hot", Gauge: "wall-tc", Severity: "high", Raised: from.Add(3 * time.Hour), Cleared: from.Add(5 * time.Hour)},
		{Alarm: "ion-gauge-silent", Gauge: "chamber-ion", Severity: "medium", Raised: from.Add(10 * time.Minute)},
	}
	began, reached, before := FindPumpDown(pir, 90000, 1)
	n.PumpDowns = []PumpDown{{Alarm: "rough-in-time", Gauge: "chamber-pirani", Start: 90000, Target: 1, Within: 3 * time.Hour,
		Began: began, Reached: reached, BeganBefore: before}}
	n.HoldTests = []HoldTest{{ID: "000004", Gauge: "chamber-pirani", From: from.Add(9 * time.Hour), To: from.Add(9*time.Hour + 10*time.Minute),
		Verdict: "pass", LeakRate: 2.1e-8, Unit: unit(t, "mbar*L/s", calib.Throughput)}}
	return n
}

func render(t *testing.T, n *Night, format string) []byte {
	t.Helper()
	var buf bytes.Buffer
	if err := Write(&buf, n, format); err != nil {
		t.Fatalf("Write %s: %v", format, err)
	}
	if *keep != "" {
		if err := os.WriteFile(filepath.Join(*keep, "night."+format), buf.Bytes(), 0o644); err != nil {
			t.Fatal(err)
		}
	}
	return buf.Bytes()
}

func TestRenderEveryFormat(t *testing.T) {
	n := testNight(t)
	magic := map[string]string{"html": "<!DOCTYPE html>", "svg": "<?xml", "png": "\x89PNG\r\n\x1a\n", "pdf": "%PDF-"}
	for _, f := range Formats {
		t.Run(f, func(t *testing.T) {
			b := render(t, n, f)
			if !bytes.HasPrefix(b, []byte(magic[f])) {
				t.Errorf("%s output starts %q, want %q", f, b[:min(len(b), 12)], magic[f])
			}
		})
	}
}
