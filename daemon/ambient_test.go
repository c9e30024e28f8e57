package daemon

import (
	"log/slog"
	"math"
	"strings"
	"testing"
	"time"

	"holdfast/calib"
	"holdfast/daemon/config"
	"holdfast/daemon/store"
	"holdfast/drivers"
)

// A gauge with ambient compensation corrects its raw signal by its
// temperature gauge's last reading before the transfer applies (the
// first-order form of calib.Ambient, common practice), and falls back to
// the raw signal when that reading is stale.
func TestAmbientCompensationInPipeline(t *testing.T) {
	now := time.Now()
	room := fakeGauge("room", time.Second, nil)
	room.cfg.Kind = "temperature"
	room.seen, room.up, room.last = true, true, calib.Sample{At: now, Value: 32, Quality: calib.QualityOK}
	p := fakeGauge("pirani", time.Second, nil)
	p.transfer = calib.HeatLoss{S0: 2, A: 0.5, Pt: 100} // REFERENCES.md §5b example sensor
	d := testDaemon(t, room, p)
	p.amb = &ambientComp{a: calib.Ambient{Reference: 22, Zero: 0.01, Span: 0.002}, from: room, maxAge: time.Minute}

	r := drivers.Reading{Raw: 6.6, Status: drivers.StatusOK, At: now}
	s, _ := d.sample(p, r)
	corrected := (6.6 - 0.01*10) / (1 + 0.002*10)
	want, _ := calib.HeatLoss{S0: 2, A: 0.5, Pt: 100}.Apply(corrected)
	if math.Abs(s.Value-want) > 1e-9*want || s.Raw != 6.6 {
		t.Errorf("compensated: value %g raw %g; want value %g from corrected raw %g, raw kept 6.6", s.Value, s.Raw, want, corrected)
	}
	room.last.At = now.Add(-2 * time.Minute) // stale
	s, _ = d.sample(p, r)
	plain, _ := calib.HeatLoss{S0: 2, A: 0.5, Pt: 100}.Apply(6.6)
	if math.Abs(s.Value-plain) > 1e-9*plain {
		t.Errorf("stale ambient: value %g, want the uncompensated %g", s.Value, plain)
	}
}

func TestAmbientConfigChecks(t *testing.T) {
	_, err := config.ParseConfig("amb.yaml", []byte(`
chamber: {name: amb, volume: 10 L}
store: {dir: /tmp/x}
links: {s: {simulator: {rough_pump: {speed: 2 m3/h}}}}
gauges:
  p1:
    link: s
    driver: sim
    instrument: pirani
    kind: pressure
    ambient: {gauge: p2, reference: 22 C, zero_per_kelvin: 0.01, span_per_kelvin: 0.5}
  p2: {link: s, driver: sim, instrument: cdg, full_scale: 1000 Pa, kind: pressure}
`))
	if err == nil {
		t.Fatal("want problems")
	}
	for _, want := range []string{`amb.yaml:11: gauges.p1.ambient.gauge: "p2" measures pressure`, `gauges.p1.ambient.span_per_kelvin:`} {
		if !strings.Contains(err.Error(), want) {
			t.Errorf("problems lack %q:\n%v", want, err)
		}
	}
}

// Reprocessing applies the same compensation as the live pipeline, from the
// ambient gauge's stored samples at each sample's time.
func TestAmbientTransfersForReprocess(t *testing.T) {
	room := fakeGauge("room", time.Second, nil)
	p := fakeGauge("p", time.Second, nil)
	d := testDaemon(t, room, p)
	p.amb = &ambientComp{a: calib.Ambient{Reference: 20, Zero: 0.1}, from: room, maxAge: time.Minute}
	t0 := time.Date(2026, 5, 1, 0, 0, 0, 0, time.UTC)
	d.store.Append("room", store.Point{At: t0, Value: 30, Quality: 0})
	d.store.Append("room", store.Point{At: t0.Add(10 * time.Minute), Value: 25, Quality: 0})
	if err := d.store.Flush(); err != nil {
		t.Fatal(err)
	}
	tAt, err := d.ambientTransfers(p, calib.Identity{}, t0, t0.Add(time.Hour))
	if err != nil {
		t.Fatal(err)
	}
	for _, c := range []struct {
		at   time.Duration
		want float64
	}{
		{0, 10 - 0.1*10},                // ambient 30 °C, 10 K above the reference
		{30 * time.Second, 10 - 0.1*10}, // the same reading, 30 s old
		{2 * time.Minute, 10},           // older than max_age: uncorrected
		{10 * time.Minute, 10 - 0.1*5},  // the second reading, 25 °C
	} {
		got, err := tAt(t0.Add(c.at)).Apply(10)
		if err != nil || math.Abs(got-c.want) > 1e-12 {
			t.Errorf("at +%s: %v, %v; want %v", c.at, got, err, c.want)
		}
	}
}

// An ambient age shorter than the temperature gauge's interval, or an
// ambient on a combined gauge, is a problem, not silently ineffective.
func TestAmbientConfigRefusesIneffective(t *testing.T) {
	_, err := config.ParseConfig("amb2.yaml", []byte(`
chamber: {name: amb, volume: 10 L}
store: {dir: /tmp/x}
links: {s: {simulator: {rough_pump: {speed: 2 m3/h}}}}
gauges:
  p1:
    link: s
    driver: sim
    instrument: pirani
    kind: pressure
    ambient: {gauge: room, reference: 22 C, zero_per_kelvin: 0.01, max_age: 1 min}
  room: {link: s, driver: sim, instrument: thermocouple, where: ambient, kind: temperature, interval: 10 min}
  p2: {link: s, driver: sim, instrument: cdg, full_scale: 1000 Pa, kind: pressure}
  both:
    combine: [p1, p2]
    ranges: {p1: [1 Pa, 1000 Pa], p2: [0.5 Pa, 1000 Pa]}
    ambient: {gauge: room, reference: 22 C}
`))
	if err == nil {
		t.Fatal("want problems")
	}
	for _, want := range []string{"gauges.p1.ambient.max_age: must be at least 10m", "gauges.both.ambient: a combined gauge has no raw signal"} {
		if !strings.Contains(err.Error(), want) {
			t.Errorf("problems lack %q:\n%v", want, err)
		}
	}
}

// At the start every gauge polls at once, so a gauge read before its
// ambient gauge has answered is not news: nothing is logged until max_age
// has passed without an ambient reading, then a warning once, and once
// more only after the compensation came back and was lost again.
func TestAmbientStartIsQuiet(t *testing.T) {
	now := time.Now()
	room := fakeGauge("room", time.Second, nil)
	room.cfg.Kind = "temperature"
	var logs strings.Builder
	log := slog.New(slog.NewTextHandler(&logs, nil))
	c := &ambientComp{a: calib.Ambient{Reference: 22, Zero: 0.01, Span: 0.002}, from: room, maxAge: time.Minute, since: now}
	if _, ok := c.compensate(log, "pirani", 6.6, now.Add(time.Second)); ok || logs.Len() != 0 {
		t.Errorf("before the ambient gauge's first answer: ok %v, logged %q; want raw, silently", ok, logs.String())
	}
	c.compensate(log, "pirani", 6.6, now.Add(61*time.Second))
	c.compensate(log, "pirani", 6.6, now.Add(62*time.Second))
	if n := strings.Count(logs.String(), "ambient compensation not applied"); n != 1 || strings.Contains(logs.String(), "err=") {
		t.Errorf("past max_age with no ambient reading: %d warnings (%q); want one, with no empty err", n, logs.String())
	}
}
