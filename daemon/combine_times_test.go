package daemon

import (
	"math"
	"strings"
	"testing"
	"time"

	"holdfast/daemon/config"
	"holdfast/daemon/store"
	"holdfast/drivers/sim"
)

// A combined gauge's members on one link share their poll slots and answer
// within microseconds of each other; each answer re-blends the gauge. Its
// series must hold one sample per stored time (1 ms here), and where two
// blends fall in one stored time the later, made with both members' fresh
// readings, is the one kept. Below the capacitance gauge's 500 Pa span only
// the Pirani counts, so every Pirani reading must appear in the combined
// series at its own stored time (the first blend of a slot, made when the
// capacitance gauge answered, carries the Pirani's reading from the slot
// before).
func TestCombinedGaugeOneSamplePerStoredTime(t *testing.T) {
	dir := t.TempDir()
	cfg, err := config.ParseConfig("combined.yaml", []byte(strings.ReplaceAll(`
chamber: {name: blend-bench, volume: 30 L}
http: {listen: "127.0.0.1:0"}
store: {dir: DIR}
links:
  bench:
    simulator:
      start_pressure: 50 Pa
      rough_pump: {speed: 5 m3/h, ultimate: 1 Pa}
gauges:
  pirani: {link: bench, driver: sim, instrument: pirani, kind: pressure, interval: 100ms, digits: 6}
  cdg: {link: bench, driver: sim, instrument: cdg, full_scale: 1000 Pa, kind: pressure, interval: 100ms}
  chamber:
    combine: [cdg, pirani]
    ranges: {cdg: [500 Pa, 1.1 kPa], pirani: [0.1 Pa, 5 kPa]}
    kind: pressure
`, "DIR", dir)))
	if err != nil {
		t.Fatal(err)
	}
	d, err := New(cfg, Options{Clock: sim.NewClock(time.Now(), 10)})
	if err != nil {
		t.Fatal(err)
	}
	begin := d.clock.Now()
	stop := runInBackground(t, d)
	for end := time.Now().Add(20 * time.Second); ; time.Sleep(20 * time.Millisecond) { // waiting for polls, not timing them
		if v := d.gaugeNamed("chamber").view(d.clock.Now()); v.seen && v.last.At.Sub(begin) > 8*time.Second {
			break
		}
		if time.Now().After(end) {
			t.Fatal("the combined gauge has not covered 8 simulated seconds")
		}
	}
	stop()
	db, err := store.Open(StorePath(dir), store.Options{ReadOnly: true})
	if err != nil {
		t.Fatal(err)
	}
	defer db.Close()
	var pirani []store.Point
	db.Range("pirani", time.Time{}, time.Now().Add(time.Hour), func(p store.Point) bool {
		pirani = append(pirani, p)
		return true
	})
	combined := map[int64]float64{}
	var prev time.Time
	n, same := 0, 0
	db.Range("chamber", time.Time{}, time.Now().Add(time.Hour), func(p store.Point) bool {
		if n > 0 && !p.At.After(prev) {
			same++
		}
		combined[p.At.UnixNano()] = p.Value
		prev = p.At
		n++
		return true
	})
	// Every Pirani reading reaches the combined series at its own stored
	// time: the slot's last blend is the one kept. (The blend is
	// 10^(Σ w·log10 p): the Pirani's value to rounding when it is the only
	// member in range.)
	stale := 0
	for _, q := range pirani {
		if v, ok := combined[q.At.UnixNano()]; !ok || math.Abs(v-q.Value) > 1e-9*q.Value {
			stale++
		}
	}
	if n < 40 || same > 0 || stale > 0 {
		t.Errorf("combined gauge: %d samples, %d at a time already stored; %d of %d Pirani readings missing from it at their time; want tens, none, none",
			n, same, stale, len(pirani))
	}
}
