package report

import (
	"bytes"
	"encoding/xml"
	"flag"
	"fmt"
	"image"
	"image/png"
	"math"
	"os"
	"path/filepath"
	"slices"
	"strconv"
	"strings"
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
	began, reached, before := FindPumpDown(slices.Values(pir), 90000, 1)
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

// svgDoc is what the tests read back from an SVG: every text in document
// order and every path's style and coordinates.
type svgDoc struct {
	texts []string
	paths []svgPath
}

type svgPath struct {
	style  string
	points int // coordinate pairs in d
}

func parseSVG(t *testing.T, b []byte) svgDoc {
	t.Helper()
	var doc svgDoc
	dec := xml.NewDecoder(bytes.NewReader(b))
	inText := false
	for {
		tok, err := dec.Token()
		if err != nil {
			if err.Error() == "EOF" {
				return doc
			}
			t.Fatalf("SVG does not parse: %v", err)
		}
		switch e := tok.(type) {
		case xml.StartElement:
			switch e.Name.Local {
			case "text":
				inText = true
				doc.texts = append(doc.texts, "")
			case "path":
				var p svgPath
				for _, a := range e.Attr {
					switch a.Name.Local {
					case "style":
						p.style = a.Value
					case "d":
						p.points = strings.Count(a.Value, "M") + strings.Count(a.Value, "L")
					}
				}
				doc.paths = append(doc.paths, p)
			}
		case xml.CharData:
			if inText {
				doc.texts[len(doc.texts)-1] += string(e)
			}
		case xml.EndElement:
			if e.Name.Local == "text" {
				inText = false
			}
		}
	}
}

func TestSVGLabelsGapsAndShading(t *testing.T) {
	doc := parseSVG(t, render(t, testNight(t), "svg"))
	has := func(s string) bool { return slices.Contains(doc.texts, s) }
	for _, want := range []string{"pressure (mbar)", "temperature (°C)", "time (UTC)", "chamber-ion (no data)",
		"wall-hot", "ion-gauge-silent", "still active", "pass 2.10e-07 mbar·L/s", "chamber-pirani not ok"} {
		if !has(want) {
			t.Errorf("no text %q in the SVG", want)
		}
	}
	// Decades as powers of ten: "10" followed by its raised exponent. The
	// data spans 1e-5 to 1e3 mbar (testNight: 1e5 Pa = 1e3 mbar at the
	// start, 2e-3 Pa·(1 ± 0.5) = 1e-5 … 3e-5 mbar at the floor), so every
	// decade from 10^-5 to 10^3 must be labelled.
	var decades []string
	for i := 0; i+1 < len(doc.texts); i++ {
		if doc.texts[i] == "10" {
			decades = append(decades, doc.texts[i+1])
		}
	}
	for k := -5; k <= 3; k++ {
		want := strings.Replace(strconv.Itoa(k), "-", "−", 1)
		if !slices.Contains(decades, want) {
			t.Errorf("decade 10^%d not labelled; exponents found: %q", k, decades)
		}
	}
	// Gaps: the Pirani's record has two breaks (no data 22:00–22:40, sensor
	// faults 01:00–01:30), so it is drawn as three lines, never one.
	lines := 0
	for _, p := range doc.paths {
		if strings.Contains(p.style, "stroke:#0072B2") && strings.Contains(p.style, "stroke-width:1.2") && p.points > 2 {
			lines++
		}
	}
	if lines != 3 {
		t.Errorf("the Pirani is drawn as %d lines, want 3 (two gaps)", lines)
	}
	// Shading: translucent fills in the severity colours of both alarms
	// (the SVG writer rounds a translucent colour by a unit or two).
	for sev, rgb := range map[string][3]int{"high": {0xE0, 0x60, 0x20}, "medium": {0xE0, 0xA0, 0x00}} {
		n := 0
		for _, p := range doc.paths {
			var r, g, b int
			i := strings.Index(p.style, "fill:#")
			if i < 0 || !strings.Contains(p.style, "fill-opacity") {
				continue
			}
			if _, err := fmt.Sscanf(p.style[i+6:i+12], "%02X%02X%02X", &r, &g, &b); err == nil &&
				abs(r-rgb[0]) <= 2 && abs(g-rgb[1]) <= 2 && abs(b-rgb[2]) <= 2 {
				n++
			}
		}
		if n < 2 { // one per panel
			t.Errorf("%s alarm shaded %d times, want once in each panel", sev, n)
		}
	}
}

func TestHTMLIsSelfContained(t *testing.T) {
	n := testNight(t)
	n.Chamber = "bake-2 <b>&"
	b := string(render(t, n, "html"))
	if strings.Contains(b, "<b>") || !strings.Contains(b, "bake-2 &lt;b&gt;&amp;") {
		t.Error("the chamber's name is not escaped in the HTML or its SVG")
	}
	for _, bad := range []string{"<script", "src=", "href=", "url(", "@import", "<link"} {
		if strings.Contains(b, bad) {
			t.Errorf("HTML contains %q: it must open from a mail with no network", bad)
		}
	}
	for _, want := range []string{"<svg", "sans-serif", "1.00e-05 mbar", "no data: never answered in this period",
		"2 raised, 1 cleared", "1 still active", "150 °C", "rough-in-time", "monitoring aid"} {
		if !strings.Contains(b, want) {
			t.Errorf("HTML lacks %q", want)
		}
	}
}

func TestPNGHasLabelsAndIsNotBlank(t *testing.T) {
	b := render(t, testNight(t), "png")
	img, err := png.Decode(bytes.NewReader(b))
	if err != nil {
		t.Fatal(err)
	}
	// 25 cm at 144 dots per inch: 25 / 2.54 × 144 = 1417 pixels.
	if w := img.Bounds().Dx(); w != 1417 {
		t.Errorf("PNG is %d pixels wide, want 1417", w)
	}
	if v := variance(img, img.Bounds()); v < 100 {
		t.Errorf("PNG grey-level variance %.1f: the picture is (nearly) blank", v)
	}
	// Labels: ink where the pressure axis label, the decade labels and the
	// time labels are drawn, and none in the white margin left of the
	// axis label.
	w, h := img.Bounds().Dx(), img.Bounds().Dy()
	for _, r := range []struct {
		name string
		box  image.Rectangle
	}{
		{"pressure axis label", image.Rect(w*2/100, h*25/100, w*10/100, h*45/100)},
		{"decade labels", image.Rect(w*8/100, h*15/100, w*12/100, h*50/100)},
	} {
		if v := ink(img, r.box); v < 50 {
			t.Errorf("%s: only %d dark pixels in %v", r.name, v, r.box)
		}
	}
}

func abs(x int) int { return max(x, -x) }

func ink(img image.Image, r image.Rectangle) int {
	n := 0
	for y := r.Min.Y; y < r.Max.Y; y++ {
		for x := r.Min.X; x < r.Max.X; x++ {
			if grey(img, x, y) < 100 {
				n++
			}
		}
	}
	return n
}

func grey(img image.Image, x, y int) float64 {
	r, g, b, _ := img.At(x, y).RGBA()
	return (0.299*float64(r) + 0.587*float64(g) + 0.114*float64(b)) / 257
}

func variance(img image.Image, r image.Rectangle) float64 {
	var s, s2, n float64
	for y := r.Min.Y; y < r.Max.Y; y += 2 {
		for x := r.Min.X; x < r.Max.X; x += 2 {
			v := grey(img, x, y)
			s, s2, n = s+v, s2+v*v, n+1
		}
	}
	return s2/n - (s/n)*(s/n)
}
