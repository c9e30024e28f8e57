package daemon

import (
	"strings"
	"testing"
	"time"

	"holdfast/daemon/config"
	"holdfast/daemon/store"
	"holdfast/drivers/sim"
)

// A combined gauge's members on one link share their poll slots and answer
// within microseconds of each other; each answer re-blends the gauge. Its
// stored series must still hold one sample per stored time (1 ms), never
// two or three at one time.
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
  pirani: {link: bench, driver: sim, instrument: pirani, kind: pressure, interval: 100ms}
  cdg: {link: bench, driver: sim, instrument: cdg, full_scale: 1000 Pa, kind: pressure, interval: 100ms}
  chamber:
    combine: [cdg, pirani]
    ranges: {cdg: [5 Pa, 1.1 kPa], pirani: [0.1 Pa, 5 kPa]}
    kind: pressure
`, "DIR", dir)))
	if err != nil {
		t.Fatal(err)
	}
	d, err := New(cfg, Options{Clock: sim.NewClock(time.Now(), 10)})
	if err != nil {
		t.Fatal(err)
	}
	stop := runInBackground(t, d)
	time.Sleep(time.Second) // 10 simulated seconds: about 100 slots of both members
	stop()
	db, err := store.Open(StorePath(dir), store.Options{ReadOnly: true})
	if err != nil {
		t.Fatal(err)
	}
	defer db.Close()
	var prev time.Time
	n, same := 0, 0
	db.Range("chamber", time.Time{}, time.Now().Add(time.Hour), func(p store.Point) bool {
		if n > 0 && !p.At.After(prev) {
			same++
		}
		prev = p.At
		n++
		return true
	})
	if n < 20 || same > 0 {
		t.Errorf("combined gauge: %d samples, %d at a time already stored; want tens, none", n, same)
	}
}
