package main

import (
	"bytes"
	"context"
	"encoding/json"
	"encoding/xml"
	"flag"
	"fmt"
	"image/color"
	"io"
	"math"
	"os"
	"path/filepath"
	"slices"
	"strconv"
	"strings"
	"testing"

	"holdfast/calib"
)

// updateCalib is -update: rewrite the calib and column golden files. It
// reuses the flag if another test file of this package defined it first.
var updateCalib = lookupUpdateFlag()

func lookupUpdateFlag() func() bool {
	if f := flag.Lookup("update"); f != nil {
		return func() bool { return f.Value.String() == "true" }
	}
	b := flag.Bool("update", false, "rewrite testdata golden files")
	return func() bool { return *b }
}

// checkCalibGolden compares got with testdata/calib/name, or rewrites it under -update.
func checkCalibGolden(t *testing.T, name, got string) {
	t.Helper()
	path := filepath.Join("testdata", "calib", name)
	if updateCalib() {
		if err := os.WriteFile(path, []byte(got), 0o644); err != nil {
			t.Fatal(err)
		}
		return
	}
	want, err := os.ReadFile(path)
	if err != nil {
		t.Fatalf("%v (run go test -update to create it)", err)
	}
	if got != string(want) {
		t.Errorf("%s differs (go test -update rewrites it)\n--- got\n%s\n--- want\n%s", path, got, want)
	}
}

func runCmd(t *testing.T, args ...string) (stdout, stderr string, err error) {
	t.Helper()
	var o, e bytes.Buffer
	err = run(context.Background(), args, &o, &e)
	return o.String(), e.String(), err
}

// Fit a demo set, then read pressures back through the written file.
func TestCalibFitEvalRoundTrip(t *testing.T) {
	for _, tc := range []struct{ csv, model, refUnit, evalUnit string }{
		{"foreline.csv", "pirani", "Pa", "Pa"},
		{"foreline.csv", "pchip", "Pa", "mbar"},
		{"logout.csv", "log-linear", "Torr", "Torr"},
		{"logout.csv", "poly", "Torr", "Torr"},
	} {
		t.Run(tc.model, func(t *testing.T) {
			csv := filepath.Join("testdata", "calib", tc.csv)
			out, report, err := runCmd(t, "calib", "fit", "--points", csv, "--model", tc.model,
				"--reference-unit", tc.refUnit, "--reference-uncertainty", "1%", "--json")
			if err != nil {
				t.Fatalf("fit: %v\n%s", err, report)
			}
			base := strings.TrimSuffix(tc.csv, ".csv") + "-" + tc.model
			checkCalibGolden(t, base+".json", out)
			checkCalibGolden(t, base+".report", report)
			file := filepath.Join(t.TempDir(), "c.json")
			if err := os.WriteFile(file, []byte(out), 0o644); err != nil {
				t.Fatal(err)
			}
			var c calib.Calibration
			if err := json.Unmarshal([]byte(out), &c); err != nil {
				t.Fatal(err)
			}
			args := []string{"calib", "eval", "--calibration", file, "--unit", tc.evalUnit}
			for _, p := range c.Points {
				args = append(args, strconv.FormatFloat(p.Raw, 'g', -1, 64))
			}
			got, warn, err := runCmd(t, args...)
			if err != nil || warn != "" {
				t.Fatalf("eval: %v, stderr %q", err, warn)
			}
			lines := strings.Fields(got)
			unit, _ := calib.ParseUnit(tc.evalUnit, calib.Pressure)
			for i, p := range c.Points {
				v, _ := strconv.ParseFloat(lines[i], 64)
				// The printed value (6 digits) is the reference times (1 + residual).
				want := unit.FromSI(p.Reference) * (1 + c.Fit.Residuals[i])
				if math.Abs(v/want-1) > 1e-5 {
					t.Errorf("point %d: eval printed %s, want %g", i+1, lines[i], want)
				}
			}
		})
	}
}

func TestCalibEvalOutsideRange(t *testing.T) {
	out, _, err := runCmd(t, "calib", "fit", "--points", filepath.Join("testdata", "calib", "logout.csv"),
		"--model", "log-linear", "--reference-unit", "Torr", "--quiet")
	if err != nil {
		t.Fatal(err)
	}
	file := filepath.Join(t.TempDir(), "c.json")
	if err := os.WriteFile(file, []byte(out), 0o644); err != nil {
		t.Fatal(err)
	}
	// The demo set scatters about an invented 0.8 V/decade with 4.0 V at
	// 1 Torr; 0 V lies below its first point (0.8 V) and reads about
	// 10^((0 − 4)/0.8) = 1e-5 Torr by hand.
	got, warn, err := runCmd(t, "calib", "eval", "--calibration", file, "--unit", "Torr", "0.0", "--strict=false")
	if err != nil || !strings.Contains(warn, "warning") || !strings.Contains(warn, "pressure below") {
		t.Errorf("eval outside: err %v, stderr %q", err, warn)
	}
	if v, _ := strconv.ParseFloat(strings.TrimSpace(got), 64); math.Abs(v/1e-5-1) > 0.02 {
		t.Errorf("eval 0.0 V printed %q, want about 1e-5 Torr", got)
	}
	_, _, err = runCmd(t, "calib", "eval", "--calibration", file, "--strict", "-0.5")
	if err == nil || !strings.Contains(err.Error(), "outside the calibrated raw range") {
		t.Errorf("--strict: err %v, want the range error", err)
	}
}

func TestCalibFitErrors(t *testing.T) {
	dir := filepath.Join("testdata", "calib")
	for _, tc := range []struct {
		name string
		args []string
		want []string
	}{
		{"bad lines", []string{"--points", filepath.Join(dir, "bad.csv"), "--model", "linear"},
			[]string{"bad.csv:4: reference", `"abc"`, "bad.csv:5: reference \"-3\"", "bad.csv:6: raw \"x\""}},
		{"reversal", []string{"--points", filepath.Join(dir, "reversed.csv"), "--model", "pchip"},
			[]string{"points 4 (line 5) and 5 (line 6)", "raw 2.31 then 2.29"}},
		{"model", []string{"--points", filepath.Join(dir, "reversed.csv"), "--model", "cubic"}, []string{`unknown model "cubic"`}},
		{"missing file", []string{"--points", filepath.Join(dir, "none.csv"), "--model", "pchip"}, []string{"none.csv"}},
		{"unit", []string{"--points", filepath.Join(dir, "logout.csv"), "--model", "pchip", "--reference-unit", "furlong"}, []string{"--reference-unit"}},
	} {
		t.Run(tc.name, func(t *testing.T) {
			_, _, err := runCmd(t, append([]string{"calib", "fit"}, tc.args...)...)
			for _, w := range tc.want {
				if err == nil || !strings.Contains(err.Error(), w) {
					t.Errorf("error %v does not contain %q", err, w)
				}
			}
		})
	}
}

func TestCalibHelpExplainsWorkflow(t *testing.T) {
	out, _, err := runCmd(t, "calib", "--help")
	if err != nil {
		t.Fatal(err)
	}
	for _, w := range []string{"calib fit --points", "calib eval --calibration", "calib plot", "raw,reference", "--strict", "safety interlock"} {
		if !strings.Contains(out, w) {
			t.Errorf("calib --help lacks %q", w)
		}
	}
}

// TestCalibPlot draws the demo set and reads the SVG back: it must carry the
// axis labels and legend, one marker per point in the points' colour and one
// per residual in theirs (foreline.csv has 18 rows), and a fitted curve of
// many segments; an empty or half-drawn plot fails. The PNG only has to be one.
func TestCalibPlot(t *testing.T) {
	out, _, err := runCmd(t, "calib", "fit", "--points", filepath.Join("testdata", "calib", "foreline.csv"), "--model", "heat-loss", "--quiet")
	if err != nil {
		t.Fatal(err)
	}
	dir := t.TempDir()
	file := filepath.Join(dir, "c.json")
	if err := os.WriteFile(file, []byte(out), 0o644); err != nil {
		t.Fatal(err)
	}
	for _, ext := range []string{"svg", "png"} {
		img := filepath.Join(dir, "c."+ext)
		if _, _, err := runCmd(t, "calib", "plot", "--calibration", file, "-o", img, "--unit", "mbar"); err != nil {
			t.Fatalf("%s: %v", ext, err)
		}
		b, err := os.ReadFile(img)
		if err != nil {
			t.Fatal(err)
		}
		if ext == "png" {
			if !bytes.HasPrefix(b, []byte("\x89PNG")) || len(b) < 1000 {
				t.Errorf("png output starts %q (%d bytes)", b[:min(len(b), 8)], len(b))
			}
			continue
		}
		texts, paths := readSVG(t, b)
		for _, w := range []string{"heat-loss calibration", "raw signal", "pressure (mbar)", "residual (%)", "reference points", "fitted curve"} {
			if !slices.Contains(texts, w) {
				t.Errorf("svg lacks the text %q; has %q", w, texts)
			}
		}
		const rows = 18
		if n := countStroke(paths, pointColor); n != rows+1 { // +1: the legend's marker
			t.Errorf("%d markers in the points' colour, want %d points and the legend's", n, rows+1)
		}
		if n := countStroke(paths, residualColor); n != rows {
			t.Errorf("%d markers in the residuals' colour, want %d", n, rows)
		}
		longest := 0
		for _, p := range paths {
			if strings.Contains(p.style, "stroke:"+svgHex(curveColor)) {
				longest = max(longest, strings.Count(p.d, "L"))
			}
		}
		if longest < 100 {
			t.Errorf("the fitted curve has %d segments, want a curve of 100 or more", longest)
		}
	}
}

type svgPath struct{ d, style string }

// readSVG returns the SVG's text contents (trimmed) and its paths.
func readSVG(t *testing.T, b []byte) (texts []string, paths []svgPath) {
	t.Helper()
	dec := xml.NewDecoder(bytes.NewReader(b))
	inText := false
	for {
		tok, err := dec.Token()
		if err == io.EOF {
			return texts, paths
		}
		if err != nil {
			t.Fatalf("svg does not parse: %v", err)
		}
		switch el := tok.(type) {
		case xml.StartElement:
			inText = el.Name.Local == "text"
			if el.Name.Local == "path" {
				var p svgPath
				for _, a := range el.Attr {
					switch a.Name.Local {
					case "d":
						p.d = a.Value
					case "style":
						p.style = a.Value
					}
				}
				paths = append(paths, p)
			}
		case xml.CharData:
			if inText {
				texts = append(texts, strings.TrimSpace(string(el)))
			}
		case xml.EndElement:
			inText = false
		}
	}
}

func svgHex(c color.RGBA) string { return fmt.Sprintf("#%02X%02X%02X", c.R, c.G, c.B) }

func countStroke(paths []svgPath, c color.RGBA) int {
	n := 0
	for _, p := range paths {
		if strings.Contains(p.style, "stroke:"+svgHex(c)) {
			n++
		}
	}
	return n
}

// A raw value at or below a heat-loss model's zero signal has no pressure:
// eval refuses it, naming the zero signal, instead of printing the bottom
// of the range as if it were a reading. The calibration is written by hand:
// S0 = 2, A = 0.5 /Pa, p_t = 100 Pa (REFERENCES.md §5b), valid from raw
// 4.380952 (5 Pa = 2 + 2.5/1.05) to 43.666667 (500 Pa = 2 + 250/6).
func TestCalibEvalBelowZeroSignal(t *testing.T) {
	file := filepath.Join(t.TempDir(), "c.json")
	js := `{"format": 1, "model": "heat-loss", "parameters": {"s0": 2, "a_per_pa": 0.5, "pt_pa": 100},
	  "points": [], "fit": {}, "uncertainty": {},
	  "valid": {"raw_min": 4.380952, "raw_max": 43.666667, "pressure_min_pa": 5, "pressure_max_pa": 500}}`
	if err := os.WriteFile(file, []byte(js), 0o644); err != nil {
		t.Fatal(err)
	}
	got, _, err := runCmd(t, "calib", "eval", "--calibration", file, "1.5")
	if err == nil || !strings.Contains(err.Error(), "zero signal s0 = 2") || strings.TrimSpace(got) != "" {
		t.Errorf("eval 1.5 below s0: printed %q, err %v; want nothing printed and an error naming the zero signal s0 = 2", got, err)
	}
	// Between S0 and the range: the model extended, with a warning. raw
	// 2.25: p = 0.25·100/(50 − 0.25) = 0.502513 Pa by hand.
	got, warn, err := runCmd(t, "calib", "eval", "--calibration", file, "2.25")
	if v, _ := strconv.ParseFloat(strings.TrimSpace(got), 64); err != nil || math.Abs(v-0.502513) > 1e-6 || !strings.Contains(warn, "extrapolated") {
		t.Errorf("eval 2.25: printed %q (%v), stderr %q; want 0.502513 with an extrapolated warning", got, err, warn)
	}
}
