package daemon

import (
	"context"
	"fmt"
	"io"
	"math"
	"net/http"
	"os"
	"path/filepath"
	"strings"
	"testing"
	"time"

	"holdfast/calib"
	"holdfast/daemon/calibstore"
	"holdfast/daemon/config"
	"holdfast/daemon/store"
	"holdfast/drivers/sim"
)

// reprocessCal is a heat-loss calibration through three points on the
// curve raw = S0 + A·p/(1 + p/p_t) with S0 = 2, A = 0.5, p_t = 100
// (REFERENCES.md §5b), taken at 5, 50 and 500 Pa. By hand:
//
//	raw(5)   = 2 + 2.5/1.05  = 4.380952
//	raw(50)  = 2 + 25/1.5    = 18.666667
//	raw(500) = 2 + 250/6     = 43.666667
func reprocessCal(t *testing.T) *calib.Calibration {
	t.Helper()
	h := calib.HeatLoss{S0: 2, A: 0.5, Pt: 100}
	var pts []calib.Point
	for _, p := range []float64{5, 50, 500} {
		pts = append(pts, calib.Point{Raw: h.Signal(p), Reference: p})
	}
	c, err := calib.Fit(calib.ModelHeatLoss, pts, calib.FitOptions{})
	if err != nil {
		t.Fatal(err)
	}
	return c
}

// Reprocessing never turns a stored ok sample into a flagged one unless
// asked to recheck ranges.
func TestReprocessKeepsOKSamples(t *testing.T) {
	c := reprocessCal(t)
	x := calib.Extended{Cal: c} // no instrument curve: the model extended
	at := time.Date(2026, 3, 2, 8, 0, 0, 0, time.UTC)
	for _, tc := range []struct {
		name    string
		raw     float64
		recheck bool
		want    calib.Quality
		value   float64 // NaN: kept as stored
	}{
		// raw 2.25 is below the fitted 4.380952 but above S0 = 2: the model
		// extended gives p = s·p_t/(A·p_t − s), s = 0.25: 25/49.75 = 0.502513 Pa.
		{"below the fitted range", 2.25, false, calib.QualityExtrapolated, 0.502513},
		// raw 1.9 is below S0: no pressure at all; the stored value stays.
		{"below the zero signal", 1.9, false, calib.QualityOK, math.NaN()},
		{"below the zero signal, rechecked", 1.9, true, calib.QualityUnderRange, math.NaN()},
		// raw 18.666667 is the 50 Pa point itself.
		{"inside", 18.666667, false, calib.QualityOK, 50},
	} {
		t.Run(tc.name, func(t *testing.T) {
			p := store.Point{At: at, Raw: tc.raw, Value: 123, Quality: uint8(calib.QualityOK), Calibration: 7}
			got, _ := recompute(p, x, 9, tc.recheck)
			if calib.Quality(got.Quality) != tc.want {
				t.Fatalf("quality %s, want %s", calib.Quality(got.Quality), tc.want)
			}
			switch {
			case math.IsNaN(tc.value) && tc.want == calib.QualityOK:
				if got != p {
					t.Errorf("point %+v; want it kept as stored %+v", got, p)
				}
			case math.IsNaN(tc.value):
				if !math.IsNaN(got.Value) {
					t.Errorf("value %g; want none", got.Value)
				}
			case math.Abs(got.Value-tc.value) > 1e-5*tc.value || got.Calibration != 9:
				t.Errorf("value %g from calibration %d; want %g from 9", got.Value, got.Calibration, tc.value)
			}
		})
	}
}

// The vessel of deploy/examples/calibration.yaml held at 0.4 Pa (pumps
// off, valve closed), with the foreline Pirani calibrated at 5, 50 and
// 500 Pa. Its calibration must not blank it below 5 Pa, and the combined
// gauge must not read over-range (and raise the above-10-Pa alarm) because
// the ion gauge, 0.125 decade above its span, is then the nearest member.
const edgeConfig = `
chamber: {name: edge-bench, volume: 45 L}
http: {listen: "127.0.0.1:0", token_file: TOKEN}
store: {dir: DIR}
links:
  bench:
    simulator:
      start_pressure: 0.4 Pa
      rough_pump: {speed: 8 m3/h, ultimate: 1 Pa}
      seed: 5
      timeline:
        - {after: 0s, pump: "off"}
        - {after: 0s, valve: closed}
gauges:
  foreline: {link: bench, driver: sim, instrument: pirani, kind: pressure, digits: 6, calibration: {use: active}}
  chamber-cdg: {link: bench, driver: sim, instrument: cdg, full_scale: 1000 Pa, kind: pressure, digits: 6}
  chamber-ion: {link: bench, driver: sim, instrument: ion, protect: 0.5 Pa, kind: pressure, calibration: none}
  chamber:
    combine: [chamber-cdg, foreline, chamber-ion]
    ranges: {chamber-cdg: [20 Pa, 1.1 kPa], foreline: [0.1 Pa, 5 kPa], chamber-ion: [1e-7 Pa, 0.3 Pa]}
    kind: pressure
alarms:
  - {name: chamber-rough, gauge: chamber, above: 10 Pa, severity: low}
`

func TestCalibrationEdgeKeepsGaugeReading(t *testing.T) {
	dir := t.TempDir()
	tok := filepath.Join(dir, "token")
	if err := os.WriteFile(tok, []byte("edge-token-0123456789\n"), 0o600); err != nil {
		t.Fatal(err)
	}
	cfg, err := config.ParseConfig("edge.yaml", []byte(strings.NewReplacer("DIR", dir, "TOKEN", tok).Replace(edgeConfig)))
	if err != nil {
		t.Fatal(err)
	}
	start := time.Date(2026, 3, 2, 20, 0, 0, 0, time.UTC)
	clk := sim.NewClock(start, 600)
	d, err := New(cfg, Options{Clock: clk})
	if err != nil {
		t.Fatal(err)
	}
	ctx, cancel := context.WithCancel(context.Background())
	done := make(chan error, 1)
	go func() { done <- d.Run(ctx) }()
	b := &liveBench{t: t, d: d, clock: clk, start: start, token: "edge-token-0123456789"}
	defer func() {
		cancel()
		if err := <-done; err != nil {
			t.Errorf("Run: %v", err)
		}
	}()

	// The simulator's Pirani follows S0 = 2, A = 0.5, p_t = 100 (REFERENCES.md
	// §5b); the calibration passes through its signal at 5, 50 and 500 Pa.
	rec, err := d.calibs().Add(calibstore.Record{Gauge: "foreline", Model: calib.ModelHeatLoss, Calibration: reprocessCal(t), Created: start})
	if err != nil {
		t.Fatal(err)
	}
	var act activateJSON
	if code := b.call("POST", fmt.Sprintf("/api/v1/calibrations/%d/activate", rec.ID), nil, &act); code != 200 {
		t.Fatalf("activate: status %d", code)
	}
	if !strings.Contains(act.Covers, "5 Pa … 500 Pa") || !strings.Contains(act.Outside, "heat-loss model extended") {
		t.Errorf("activation says it covers %q, outside %q; want 5 Pa … 500 Pa and the model extended", act.Covers, act.Outside)
	}
	from := clk.Now().Add(2 * time.Second)
	b.waitUntil(start.Add(5 * time.Minute))

	// Each Pirani sample: quality extrapolated, with a value near the held
	// 0.4 Pa. One sample's noise there is about 0.02 Pa (the simulator's
	// 0.02 Pa floor): 25 % is over four standard deviations.
	n, sum := 0, 0.0
	to := clk.Now()
	d.store.Range("foreline", from, to, func(p store.Point) bool {
		n++
		if q := calib.Quality(p.Quality); q != calib.QualityExtrapolated || math.Abs(p.Value-0.4) > 0.1 || p.Calibration != rec.ID {
			t.Errorf("foreline at %s: %g Pa, %s, calibration %d; want about 0.4 Pa, extrapolated, %d", p.At.Format(time.TimeOnly), p.Value, q, p.Calibration, rec.ID)
			return false
		}
		sum += p.Value
		return true
	})
	// A blanked gauge stores none; a loaded machine may skip some polls of
	// the fast clock, so half the window's 1 s polls will do.
	if polls := to.Sub(from).Seconds(); float64(n) < polls/2 || math.Abs(sum/float64(n)-0.4) > 0.01 {
		t.Errorf("foreline: %d samples averaging %g Pa over %.0f s; want at least %.0f (half the 1 s polls) near 0.4 Pa",
			n, sum/float64(n), polls, polls/2)
	}
	// The combined gauge follows the Pirani, marked; never over-range. (On
	// a loaded machine the fast clock can leave a member stale for a poll;
	// the blend then falls back on another member's reading, so only most
	// samples need be the Pirani's.)
	total, near, over := 0, 0, 0
	d.store.Range("chamber", from, clk.Now(), func(p store.Point) bool {
		total++
		switch q := calib.Quality(p.Quality); {
		case q == calib.QualityOverRange:
			over++
			t.Errorf("chamber at %s reads over-range; want no over-range at 0.4 Pa", p.At.Format(time.TimeOnly))
		case q == calib.QualityExtrapolated && math.Abs(p.Value-0.4) <= 0.1:
			near++
		}
		return over == 0
	})
	if total == 0 || near < total*9/10 {
		t.Errorf("chamber: %d of %d samples about 0.4 Pa extrapolated; want at least 90 %%", near, total)
	}
	var hist []map[string]any
	b.call("GET", "/api/v1/alarms/history", nil, &hist)
	if len(hist) != 0 {
		t.Errorf("alarm history %v; want none (0.4 Pa is below the 10 Pa limit)", hist)
	}
	// /metrics exports the value and the quality.
	resp, err := http.Get("http://" + d.Addr() + "/metrics")
	if err != nil {
		t.Fatal(err)
	}
	body, _ := io.ReadAll(resp.Body)
	resp.Body.Close()
	for _, w := range []string{`holdfast_sensor_quality{gauge="foreline",quality="extrapolated"} 1`, `holdfast_pressure_pascals{gauge="foreline"}`} {
		if !strings.Contains(string(body), w) {
			t.Errorf("/metrics lacks %s", w)
		}
	}
}
