package daemon

import (
	"context"
	"encoding/json"
	"log/slog"
	"math"
	"net/http"
	"strings"
	"testing"
	"time"

	"holdfast/calib"
	"holdfast/daemon/config"
	"holdfast/daemon/store"
	"holdfast/drivers"
	"holdfast/drivers/sim"
)

const gasConfig = `
chamber: {name: gas, volume: 30 L}
http: {listen: "127.0.0.1:0"}
store: {dir: DIR}
links:
  bench:
    simulator:
      rough_pump: {speed: 5 m3/h, ultimate: 1 Pa}
      high_pump: {speed: 60 L/s, ultimate: 1e-6 Pa}
      crossover: 10 Pa
      seed: 5
gauges:
  pirani: {link: bench, driver: sim, instrument: pirani, kind: pressure, gas: argon}
  ion:
    link: bench
    driver: sim
    instrument: ion
    kind: pressure
    gas: {name: He, sensitivity: 0.16, source: "measured on this gauge"}
  cdg:
    link: bench
    driver: sim
    instrument: cdg
    full_scale: 133 kPa
    kind: pressure
    transpiration: {sensor_temperature: 45 C, chamber_temperature: 20 C, model: molecular}
  hot-cdg:
    link: bench
    driver: sim
    instrument: cdg
    full_scale: 133 kPa
    kind: pressure
    transpiration: {sensor_temperature: 45 C, chamber_gauge: wall, model: setina, tube_diameter: 4.6 mm}
  wall: {link: bench, driver: sim, instrument: thermocouple, kind: temperature}
`

// check prints each factor with its source, and each transpiration's
// low-pressure factor (by hand: √(293.15/318.15) = √0.921421 = 0.959907).
func TestGasConfigNotes(t *testing.T) {
	cfg, err := config.ParseConfig("gas.yaml", []byte(strings.Replace(gasConfig, "DIR", "/tmp/x", 1)))
	if err != nil {
		t.Fatal(err)
	}
	notes := strings.Join(cfg.Notes, "\n")
	for _, want := range []string{
		"13: note: gauges.pirani.gas: Ar: true pressure = 1.7 × indicated (typical value", "from memory",
		"gauges.ion.gas: He: true pressure = 6.25 × indicated (measured on this gauge)",
		"gauges.cdg.transpiration: molecular model, sensor 45 °C, chamber 20 °C: chamber pressure = 0.95991 × reading at low pressure",
	} {
		if !strings.Contains(notes, want) {
			t.Errorf("notes lack %q:\n%s", want, notes)
		}
	}
}

// The daemon end to end: the sample stored for a Pirani with gas: argon is
// the instrument's own curve times 1.7 (the typical thermal-conductivity
// gauge factor for Ar, from memory; REFERENCES.md §5a), for an ionisation
// gauge with a user's sensitivity 0.16 it is 1/0.16 = 6.25 times the
// reading, and for a capacitance gauge held at 45 °C on a 20 °C chamber
// with the molecular model it is the reading times √(293.15/318.15) =
// 0.959907 (REFERENCES.md §6a: 0.9599066). /api/v1/gauges shows them.
func TestGasEndToEnd(t *testing.T) {
	dir := t.TempDir()
	cfg, err := config.ParseConfig("gas.yaml", []byte(strings.Replace(gasConfig, "DIR", dir, 1)))
	if err != nil {
		t.Fatal(err)
	}
	d, err := New(cfg, Options{Clock: sim.NewClock(time.Now(), 600)})
	if err != nil {
		t.Fatal(err)
	}
	ctx, cancel := context.WithCancel(context.Background())
	done := make(chan error, 1)
	go func() { done <- d.Run(ctx) }()
	byName := map[string]gaugeJSON{}
	deadline := time.Now().Add(10 * time.Second)
	for time.Now().Before(deadline) {
		for _, g := range apiGaugeList(t, d.Addr()) {
			byName[g.Gauge] = g
		}
		if tr := byName["hot-cdg"].Transpiration; tr != nil && tr.LowPressureFactor != nil {
			break // the wall gauge has read
		}
		time.Sleep(20 * time.Millisecond) // waiting for a real server, not timing logic
	}
	time.Sleep(600 * time.Millisecond) // 6 simulated minutes: the ion gauge comes on below 0.1 Pa
	cancel()
	if err := <-done; err != nil {
		t.Fatalf("Run: %v", err)
	}
	if tr := byName["hot-cdg"].Transpiration; tr == nil || tr.LowPressureFactor == nil {
		t.Errorf("hot-cdg: no low-pressure factor once the wall gauge read: %+v", tr)
	}
	if g := byName["pirani"].Gas; g == nil || g.Name != "Ar" || g.Factor != 1.7 || !strings.Contains(g.Source, "from memory") {
		t.Errorf("/api/v1/gauges pirani gas = %+v; want Ar, 1.7 and its source", g)
	}
	if g := byName["ion"].Gas; g == nil || g.Name != "He" || g.Factor != 6.25 || g.Source != "measured on this gauge" {
		t.Errorf("/api/v1/gauges ion gas = %+v; want He, 6.25, the user's source", g)
	}
	if tr := byName["cdg"].Transpiration; tr == nil || tr.Model != "molecular" || tr.SensorTemperature != 45 ||
		tr.ChamberTemperature == nil || *tr.ChamberTemperature != 20 || tr.LowPressureFactor == nil || math.Abs(*tr.LowPressureFactor-0.959907) > 1e-6 {
		t.Errorf("/api/v1/gauges cdg transpiration = %+v; want molecular, 45 °C, 20 °C, factor 0.959907", tr)
	}
	if tr := byName["hot-cdg"].Transpiration; tr == nil || tr.Model != "setina" || tr.ChamberGauge != "wall" || tr.TubeDiameter != 4.6e-3 || tr.Gas != "N2" {
		t.Errorf("/api/v1/gauges hot-cdg transpiration = %+v; want setina from wall, 4.6 mm, N2", tr)
	}

	db, err := store.Open(StorePath(dir), store.Options{ReadOnly: true})
	if err != nil {
		t.Fatal(err)
	}
	defer db.Close()
	h := sim.DefaultHeatLoss()
	for _, c := range []struct {
		gauge string
		want  func(raw float64) float64
	}{
		{"pirani", func(raw float64) float64 { p, _ := h.Apply(raw); return 1.7 * p }},
		{"ion", func(raw float64) float64 { return raw / 0.16 }},
		{"cdg", func(raw float64) float64 { return raw * 133e3 / 10 * 0.9599066 }},
	} {
		n := 0
		err := db.Range(c.gauge, time.Time{}, time.Now().Add(time.Hour*1000), func(p store.Point) bool {
			if calib.Quality(p.Quality) != calib.QualityOK {
				return true
			}
			n++
			if want := c.want(p.Raw); math.Abs(p.Value-want) > 1e-6*math.Abs(want) {
				t.Errorf("%s at %s: stored %g from raw %g, want %g", c.gauge, p.At.Format(time.TimeOnly), p.Value, p.Raw, want)
				return false
			}
			return true
		})
		if err != nil || n == 0 {
			t.Errorf("%s: %d ok samples, %v", c.gauge, n, err)
		}
	}
}

func apiGaugeList(t *testing.T, addr string) []gaugeJSON {
	t.Helper()
	resp, err := http.Get("http://" + addr + "/api/v1/gauges")
	if err != nil {
		t.Fatal(err)
	}
	defer resp.Body.Close()
	var out []gaugeJSON
	if err := json.NewDecoder(resp.Body).Decode(&out); err != nil {
		t.Fatal(err)
	}
	return out
}

// The Šetina form across the range, for a CDG at 45 °C on a 20 °C chamber
// with a 4.6 mm tube in N₂ (REFERENCES.md §6a, D, by hand in
// calib/transpiration_test.go): a 1 Pa reading is 1/1.030032 = 0.970844 Pa
// in the chamber, a 100 Pa reading 100/1.000487 = 99.9513 Pa; with the
// chamber at the sensor's temperature there is nothing to correct.
func TestTranspirationSetinaApplied(t *testing.T) {
	c := &correction{tr: &transpiration{model: "setina", sensorC: 45, diameter: 4.6e-3, gas: "N2"}}
	for _, tc := range []struct{ reading, chamberC, want float64 }{{1, 20, 0.970844}, {100, 20, 99.9513}, {1, 45, 1}} {
		if got := c.apply(tc.reading, tc.chamberC, true); math.Abs(got-tc.want) > 1e-6*tc.want {
			t.Errorf("reading %g Pa, chamber %g °C: %.7g Pa, want %.7g", tc.reading, tc.chamberC, got, tc.want)
		}
	}
	if got := c.apply(1, 0, false); got != 1 {
		t.Errorf("without a chamber temperature: %g, want the reading unchanged", got)
	}
}

// Reprocessing a span with the instrument's own curve gives back exactly the
// values the live pipeline stored: the gas factor, and the transpiration
// correction from the chamber gauge's stored readings (including the stretch
// where that gauge has none and the fixed chamber temperature stands in).
func TestReprocessEqualsLiveWithCorrections(t *testing.T) {
	wall := fakeGauge("wall", time.Second, nil)
	wall.cfg.Kind, wall.dim = "temperature", calib.Temperature
	pir := fakeGauge("pir", time.Second, nil)
	pir.transfer = calib.HeatLoss{S0: 2, A: 0.5, Pt: 100} // REFERENCES.md §5b invented example sensor
	cdg := fakeGauge("cdg", time.Second, nil)
	cdg.transfer = calib.Scale{Factor: 100}
	d := testDaemon(t, wall, pir, cdg)
	if err := d.loadCalibrations(); err != nil {
		t.Fatal(err)
	}
	fixed := 18.0
	pir.corr = &correction{gas: &calib.GasFactor{Gas: "Ar", Factor: 1.7}}
	cdg.corr = &correction{tr: &transpiration{model: "setina", sensorC: 45, fixedC: &fixed, from: wall, maxAge: 5 * time.Second, diameter: 4.6e-3, gas: "N2"}}

	ctx := context.Background()
	log := slog.New(slog.DiscardHandler)
	t0 := time.Date(2026, 5, 1, 0, 0, 0, 0, time.UTC)
	for i := range 60 {
		at := t0.Add(time.Duration(i) * time.Second)
		if i < 20 || i >= 40 { // the wall gauge is silent from 20 s to 40 s
			d.handle(ctx, log, wall, drivers.Reading{Raw: 20 + 0.1*float64(i), Status: drivers.StatusOK, At: at}, nil)
		}
		d.handle(ctx, log, pir, drivers.Reading{Raw: 3 + 0.05*float64(i), Status: drivers.StatusOK, At: at.Add(100 * time.Millisecond)}, nil)
		d.handle(ctx, log, cdg, drivers.Reading{Raw: 0.001 * float64(i+1), Status: drivers.StatusOK, At: at.Add(200 * time.Millisecond)}, nil)
	}
	if err := d.store.Flush(); err != nil {
		t.Fatal(err)
	}
	live := map[string][]store.Point{}
	for _, g := range []string{"pir", "cdg"} {
		_ = d.store.Range(g, t0, t0.Add(time.Hour), func(p store.Point) bool { live[g] = append(live[g], p); return true })
	}
	// Spot checks by hand (Šetina eq. 4–5, N₂ constants, η = 17.9 µPa·s,
	// d = 4.6 mm; REFERENCES.md §6): the first cdg reading, 0.001 × 100 =
	// 0.1 Pa with the wall at 20 °C: p* = 2.030029 Pa, ψ = 0.049260,
	// Aψ² + Bψ + C√ψ = 0.087346, ratio (0.087346 + 1.041768)/1.087346 =
	// 1.0384128, chamber 0.09630082 Pa. At 30 s the wall gauge is silent,
	// so the fixed 18 °C stands in: 3.1 Pa, p* = 2.026705 Pa, ψ = 1.529576,
	// sum 0.953570, √(318.15/291.15) = 1.045340, ratio 1.0232088, chamber
	// 3.029685 Pa.
	for _, c := range []struct {
		i    int
		want float64
	}{{0, 0.09630082}, {30, 3.029685}} {
		if got := live["cdg"][c.i].Value; math.Abs(got-c.want) > 1e-6*c.want {
			t.Errorf("cdg sample %d: %.7g Pa, want %.7g", c.i, got, c.want)
		}
	}
	for _, g := range []string{"pir", "cdg"} {
		a, err := d.reprocess(reprocessRequest{Gauge: g, Calibration: 0, From: t0, To: t0.Add(time.Hour)})
		if err != nil {
			t.Fatal(err)
		}
		if a.Samples != 60 || a.Changed != 0 {
			t.Errorf("%s: reprocess saw %d samples and changed %d; want 60 and 0 (reprocess equals live)", g, a.Samples, a.Changed)
		}
		i := 0
		_ = d.store.Range(g, t0, t0.Add(time.Hour), func(p store.Point) bool {
			if math.Float64bits(p.Value) != math.Float64bits(live[g][i].Value) {
				t.Errorf("%s sample %d: %g after reprocessing, %g live", g, i, p.Value, live[g][i].Value)
			}
			i++
			return true
		})
	}
}

// Reprocessing rewrites stored values; the store's minute and hour
// roll-ups must follow, or a long query would still plot the old values.
func TestReprocessKeepsRollupsWithTheSamples(t *testing.T) {
	pir := fakeGauge("pir", time.Second, nil)
	pir.transfer = calib.HeatLoss{S0: 2, A: 0.5, Pt: 100} // REFERENCES.md §5b invented example sensor
	d := testDaemon(t, pir)
	if err := d.loadCalibrations(); err != nil {
		t.Fatal(err)
	}
	ctx := context.Background()
	log := slog.New(slog.DiscardHandler)
	t0 := time.Date(2026, 5, 1, 0, 0, 0, 0, time.UTC)
	for i := range 300 { // five minutes at 1 Hz
		d.handle(ctx, log, pir, drivers.Reading{Raw: 3 + 0.01*float64(i), Status: drivers.StatusOK, At: t0.Add(time.Duration(i) * time.Second)}, nil)
	}
	if err := d.store.Flush(); err != nil {
		t.Fatal(err)
	}
	pir.corr = &correction{gas: &calib.GasFactor{Gas: "Ar", Factor: 1.7}} // a gas correction decided afterwards
	a, err := d.reprocess(reprocessRequest{Gauge: "pir", Calibration: 0, From: t0, To: t0.Add(time.Hour)})
	if err != nil || a.Changed != 300 {
		t.Fatalf("reprocess changed %d, %v; want all 300", a.Changed, err)
	}
	mins, err := d.store.Rollups("pir", store.TierMinute, t0, t0.Add(time.Hour))
	if err != nil || len(mins) != 5 {
		t.Fatalf("%d minute roll-ups, %v; want 5", len(mins), err)
	}
	for _, m := range mins { // each equals the plain aggregate of the reprocessed samples
		n, lo, hi := 0, math.Inf(1), math.Inf(-1)
		_ = d.store.Range("pir", m.Start, m.End, func(p store.Point) bool {
			n, lo, hi = n+1, min(lo, p.Value), max(hi, p.Value)
			return true
		})
		if m.Count != n || m.Min != lo || m.Max != hi {
			t.Errorf("minute %s: count %d, min %g, max %g; the samples give %d, %g, %g", m.Start, m.Count, m.Min, m.Max, n, lo, hi)
		}
	}
}
