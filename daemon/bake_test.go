package daemon

import (
	"bytes"
	"context"
	"log/slog"
	"math"
	"os"
	"path/filepath"
	"strings"
	"testing"
	"time"

	"holdfast/alerts"
	"holdfast/calib"
	"holdfast/daemon/config"
	"holdfast/daemon/report"
	"holdfast/daemon/store"
	"holdfast/drivers/sim"
)

// playBake runs the shipped demo's simulated chamber (with wallLag, when
// not zero, in place of its own) on a fake clock through the daemon's
// bake glue, alarms and a real store, reading wall-tc every 5 s and
// chamber-cdg every second as the demo config does; it returns the alarm
// events and the stored bakes.
func playBake(t *testing.T, upTo, wallLag time.Duration) ([]alerts.Event, []BakeJSON) {
	t.Helper()
	b, err := os.ReadFile(filepath.Join("..", "deploy", "examples", "demo.yaml"))
	if err != nil {
		t.Fatal(err)
	}
	cfg, err := config.ParseConfig("demo.yaml", b)
	if err != nil {
		t.Fatal(err)
	}
	if wallLag > 0 {
		cfg.Links["bench"].Simulator.WallLag = config.Duration(wallLag)
	}
	start := time.Date(2026, 3, 1, 18, 0, 0, 0, time.UTC)
	now := start
	ch, err := sim.New(simConfig(cfg, cfg.Links["bench"].Simulator), func() time.Time { return now })
	if err != nil {
		t.Fatal(err)
	}
	db, err := store.Open(filepath.Join(t.TempDir(), "holdfast.db"), store.Options{})
	if err != nil {
		t.Fatal(err)
	}
	defer db.Close()
	cfg.Alarms = nil // only the bake plan's alarms: the others are tested elsewhere
	d := &Daemon{store: db, clock: wallClock{}, emit: func(Event) {}}
	d.cfgp.Store(cfg)
	e := alerts.NewEngine(d.limits())
	if _, err := e.Attach(nil); err != nil {
		t.Fatal(err)
	}
	log := slog.New(slog.DiscardHandler)
	ins := map[string]*sim.Instrument{}
	every := map[string]int{"wall-tc": 5, "chamber-cdg": 1}
	for name := range every {
		gc := cfg.Gauges[name]
		in, err := ch.Instrument(sim.InstrumentConfig{Name: name, Kind: gc.Instrument, Digits: gc.Digits, Where: gc.Where,
			FullScale: float64(gc.FullScale), Timeout: time.Millisecond}) // a silent instrument waits this long (wall time)
		if err != nil {
			t.Fatal(err)
		}
		ins[name] = in
	}
	var evs []alerts.Event
	g := &gauge{}
	for sec := 0; now.Sub(start) < upTo; sec++ {
		now = start.Add(time.Duration(sec) * time.Second)
		for name, in := range ins {
			if sec%every[name] != 0 {
				continue
			}
			r, err := in.Read(context.Background())
			if err != nil {
				continue
			}
			g.transfer = in.Transfer()
			s, _ := d.sample(g, r)
			d.bakeObserve(log, name, s)
			evs = append(evs, e.Observe(name, s)...)
		}
	}
	bs, err := d.Bakes()
	if err != nil {
		t.Fatal(err)
	}
	return evs, bs
}

// The demo's heater is on from 2:30 to 3:15 at a 150 °C setpoint and the
// wall follows it with a 20 min first-order lag from 22 °C, so its peak,
// at 3:15, is 22 + (150 − 22)·(1 − e^(−45/20)) = 22 + 128·0.8946 =
// 136.5 °C (hand calculation); the simulated thermocouple adds a little
// noise, so within 1.5 °C. The wall is back at 50 °C when
// 114.5·e^(−t/20 min) = 28, t = 28.2 min: done near 3:43. The plan's
// limits fit the scenario, so no bake alarm is raised.
func TestDemoBakeSummary(t *testing.T) {
	evs, bs := playBake(t, 3*time.Hour+50*time.Minute, 0)
	for _, ev := range evs {
		if ev.Kind == alerts.Raised && len(ev.Alarm) > 5 && ev.Alarm[:5] == "bake-" {
			t.Errorf("demo bake raised %s: %s", ev.Alarm, ev.Message)
		}
	}
	if len(bs) != 1 {
		t.Fatalf("stored bakes %+v, want one", bs)
	}
	b := bs[0]
	t.Logf("bake %+v", b)
	if b.Phase != "done" || b.Verdict != "complete" || b.MaxC == nil || math.Abs(*b.MaxC-136.5) > 1.5 {
		t.Errorf("phase %s verdict %s max %v; want done, complete, 136.5 ± 1.5 °C", b.Phase, b.Verdict, b.MaxC)
	}
	start := time.Date(2026, 3, 1, 18, 0, 0, 0, time.UTC)
	if end := b.End.Sub(start); end < 3*time.Hour+40*time.Minute || end > 3*time.Hour+46*time.Minute {
		t.Errorf("done at +%s, want near 3:43", end)
	}
	if b.PressBeforePa == nil || b.PressAfterPa == nil || b.PressMaxPa == nil || !(*b.PressMaxPa > *b.PressBeforePa) {
		t.Errorf("pressures before %v after %v max %v; want all, the maximum above the one before", b.PressBeforePa, b.PressAfterPa, b.PressMaxPa)
	}
}

// The same heater with a 2 min lag heats the wall at up to
// 128/2 = 64 °C/min, far past the plan's 8 °C/min: the heating alarm is raised.
func TestDemoFastRampRaisesAlarm(t *testing.T) {
	evs, _ := playBake(t, 2*time.Hour+50*time.Minute, 2*time.Minute)
	for _, ev := range evs {
		if ev.Kind == alerts.Raised && ev.Alarm == "bake-heating-too-fast" {
			return
		}
	}
	t.Error("a 64 °C/min ramp did not raise bake-heating-too-fast")
}

// The demo's bake reaches the morning report: a header line with its
// summary, and the phases shaded on the temperature panel.
func TestDemoBakeInReport(t *testing.T) {
	_, bs := playBake(t, 3*time.Hour+50*time.Minute, 0)
	start := time.Date(2026, 3, 1, 18, 0, 0, 0, time.UTC)
	rb := reportBakes(bs, start, start.Add(4*time.Hour))
	if len(rb) != 1 || len(rb[0].Phases) != 3 || rb[0].Phases[0].Phase != "ramp" || rb[0].Phases[2].Phase != "cool" {
		t.Fatalf("report bakes %+v, want one with ramp, hold, cool", rb)
	}
	n := &report.Night{Chamber: "demo", From: start, To: start.Add(4 * time.Hour), Bakes: rb,
		Pressure: calib.Pressure.Base(), Temperature: calib.Temperature.Base(),
		Series: []report.Series{{Gauge: "wall-tc", Kind: "temperature", Points: []report.Point{{At: start, Value: 22}}}}}
	var buf bytes.Buffer
	if err := report.Write(&buf, n, "html"); err != nil {
		t.Fatal(err)
	}
	if !strings.Contains(buf.String(), "<h2>Bakes</h2>") || !strings.Contains(buf.String(), "bake 000001 (complete)") {
		t.Errorf("report lacks the bake summary")
	}
}
