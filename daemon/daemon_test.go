package daemon

import (
	"bufio"
	"context"
	"io"
	"net/http"
	"strconv"
	"strings"
	"testing"
	"time"

	"holdfast/daemon/config"
	"holdfast/drivers/sim"
)

const e2eConfig = `
chamber: {name: e2e, volume: 30 L}
http: {listen: "127.0.0.1:0"}
store: {dir: DIR}
links:
  bench:
    simulator:
      rough_pump: {speed: 5 m3/h, ultimate: 1 Pa}
      high_pump: {speed: 60 L/s, ultimate: 1e-6 Pa}
      crossover: 10 Pa
      outgassing: 2e-6 Pa*m3/s
      seed: 3
gauges:
  pirani: {link: bench, driver: sim, instrument: pirani, kind: pressure, unit: mbar}
  cdg: {link: bench, driver: sim, instrument: cdg, full_scale: 133 kPa, kind: pressure}
  wall: {link: bench, driver: sim, instrument: thermocouple, kind: temperature, interval: 5s}
alarms:
  - {name: still-rough, gauge: pirani, above: 1000 Pa, for: 10s, severity: low}
`

// scrape returns the holdfast_pressure_pascals values by gauge.
func scrape(t *testing.T, addr string) map[string]float64 {
	t.Helper()
	resp, err := http.Get("http://" + addr + "/metrics")
	if err != nil {
		t.Fatalf("scrape: %v", err)
	}
	defer resp.Body.Close()
	out := map[string]float64{}
	sc := bufio.NewScanner(resp.Body)
	for sc.Scan() {
		line := sc.Text()
		if !strings.HasPrefix(line, "holdfast_pressure_pascals{") {
			continue
		}
		gauge := line[strings.Index(line, `"`)+1 : strings.LastIndex(line, `"`)]
		v, err := strconv.ParseFloat(line[strings.LastIndex(line, " ")+1:], 64)
		if err != nil {
			t.Fatalf("bad metric line %q: %v", line, err)
		}
		out[gauge] = v
	}
	return out
}

// The walking skeleton end to end: the simulated chamber is polled, samples
// are stored in a real bbolt file, served on a real HTTP port, and the
// pump-down shows as falling pressures between two scrapes.
func TestDaemonEndToEnd(t *testing.T) {
	dir := t.TempDir()
	cfg, err := config.ParseConfig("e2e.yaml", []byte(strings.Replace(e2eConfig, "DIR", dir, 1)))
	if err != nil {
		t.Fatal(err)
	}
	var events []Event
	evc := make(chan Event, 1000)
	d, err := New(cfg, Options{Clock: sim.NewClock(time.Now(), 200), OnEvent: func(e Event) {
		select {
		case evc <- e:
		default:
		}
	}})
	if err != nil {
		t.Fatal(err)
	}
	ctx, cancel := context.WithCancel(context.Background())
	done := make(chan error, 1)
	go func() { done <- d.Run(ctx) }()

	deadline := time.Now().Add(10 * time.Second)
	var first map[string]float64
	for time.Now().Before(deadline) {
		if first = scrape(t, d.Addr()); len(first) >= 2 {
			break
		}
		time.Sleep(20 * time.Millisecond) // waiting for a real server, not timing logic
	}
	if len(first) < 2 {
		t.Fatalf("want two pressure series, got %v", first)
	}
	time.Sleep(500 * time.Millisecond) // 100 s simulated, or more on a loaded machine
	second := scrape(t, d.Addr())
	for g, p1 := range first {
		// A gauge whose pressure fell below its range (the capacitance
		// gauge, when the test is scheduled late) exports no value; its
		// quality says under-range, which is falling too.
		below := scrapeLine(t, d.Addr(), `holdfast_sensor_quality{gauge="`+g+`",quality="under-range"} 1`) != ""
		if p2, ok := second[g]; !below && (!ok || !(p2 < p1)) {
			t.Errorf("gauge %s: pressure %g then %g; want it falling during the pump-down", g, p1, p2)
		}
	}
	resp, err := http.Get("http://" + d.Addr() + "/api/v1/gauges")
	if err != nil {
		t.Fatal(err)
	}
	body, _ := io.ReadAll(resp.Body)
	resp.Body.Close()
	if !strings.Contains(string(body), `"gauge": "wall"`) {
		t.Errorf("/api/v1/gauges lacks the thermocouple: %s", body)
	}
	cancel()
	if err := <-done; err != nil {
		t.Fatalf("Run: %v", err)
	}
	close(evc)
	for e := range evc {
		events = append(events, e)
	}
	counts, err := CountSamples(dir, d.GaugeNames())
	if err != nil {
		t.Fatal(err)
	}
	for _, g := range []string{"pirani", "cdg", "wall"} {
		if counts[g] == 0 {
			t.Errorf("no samples stored for %s", g)
		}
	}
	if counts["pirani"] <= counts["wall"] {
		t.Errorf("pirani (1 s) stored %d, wall (5 s) %d: want more at the faster interval", counts["pirani"], counts["wall"])
	}
	kinds := map[string]bool{}
	for _, e := range events {
		who := e.Gauge
		if e.Alarm != "" {
			who = e.Alarm
		}
		kinds[e.Kind+" "+who] = true
	}
	for _, want := range []string{"gauge-up pirani", "gauge-up wall", "alarm-raised still-rough", "alarm-cleared still-rough"} {
		if !kinds[want] {
			t.Errorf("no %q event; got %v", want, kinds)
		}
	}
	// The chamber is at atmosphere from the first sample: that starts the
	// on-delay but is no crossing to announce.
	if kinds["limit-crossed still-rough"] {
		t.Errorf("a limit-crossed event for a condition true from the first sample; got %v", kinds)
	}
}
