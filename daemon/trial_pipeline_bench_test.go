package daemon

import (
	"context"
	"fmt"
	"log/slog"
	"net/http"
	"net/http/httptest"
	"strings"
	"sync"
	"sync/atomic"
	"syscall"
	"testing"
	"time"

	"holdfast/daemon/alarmstore"
	"holdfast/daemon/config"
	"holdfast/drivers"
)

// settableClock is a daemon clock the benchmark moves by hand.
type settableClock struct{ ns atomic.Int64 }

func (c *settableClock) Now() time.Time                         { return time.Unix(0, c.ns.Load()) }
func (c *settableClock) After(d time.Duration) <-chan time.Time { return time.After(d) }
func (c *settableClock) set(t time.Time)                        { c.ns.Store(t.UnixNano()) }

// pipelineConfig is 16 gauges of every simulated kind on one link, each
// with its own calibration path (the Pirani's heat-loss curve, the CDG's
// linear volts, the ion gauge's own reading, thermocouple EMF through the
// ITS-90 inverse, RTD resistance through the IEC 60751 inverse), a blend
// of three of them, and a limit alarm on every pressure.
func pipelineConfig(dir string) string {
	var b strings.Builder
	fmt.Fprintf(&b, `
chamber: {name: pipeline-bench, volume: 30 L}
http: {listen: "127.0.0.1:0"}
store: {dir: %s, flush_every: 100ms}
links:
  rig:
    simulator:
      rough_pump: {speed: 5 m3/h, ultimate: 1 Pa}
      high_pump: {speed: 60 L/s, ultimate: 1e-6 Pa}
      crossover: 10 Pa
      seed: 5
gauges:
  chamber:
    combine: [cdg-0, pirani-0, ion-0]
    ranges: {cdg-0: [20 Pa, 1.1 kPa], pirani-0: [0.1 Pa, 5 kPa], ion-0: [1e-7 Pa, 0.3 Pa]}
    kind: pressure
alarms:
`, dir)
	var gauges, alarms strings.Builder
	for i := range 4 {
		for _, kind := range []string{"pirani", "cdg", "ion"} {
			extra := ""
			if kind == "cdg" {
				extra = ", full_scale: 133 kPa"
			}
			fmt.Fprintf(&gauges, "  %s-%d: {link: rig, driver: sim, instrument: %s%s, kind: pressure, interval: 50ms}\n", kind, i, kind, extra)
			fmt.Fprintf(&alarms, "  - {name: %s-%d-vented, gauge: %s-%d, above: 1 kPa, for: 10s, severity: high}\n", kind, i, kind, i)
		}
	}
	for i := range 2 {
		fmt.Fprintf(&gauges, "  tc-%d: {link: rig, driver: sim, instrument: thermocouple, kind: temperature, interval: 50ms, digits: 5, probe: {thermocouple: K, input: mV, cold_junction: 22 C}}\n", i)
		fmt.Fprintf(&gauges, "  rtd-%d: {link: rig, driver: sim, instrument: rtd, kind: temperature, interval: 50ms, digits: 6, probe: {rtd: pt100, input: ohm}}\n", i)
	}
	s := b.String()
	s = strings.Replace(s, "gauges:\n", "gauges:\n"+gauges.String(), 1)
	return s + alarms.String()
}

// cpuTime is the CPU time (user and system) this process has used.
func cpuTime(tb testing.TB) time.Duration {
	var ru syscall.Rusage
	if err := syscall.Getrusage(syscall.RUSAGE_SELF, &ru); err != nil {
		tb.Fatal(err)
	}
	return time.Duration(ru.Utime.Nano() + ru.Stime.Nano())
}

// BenchmarkPipeline measures the whole path a reading takes after the wire:
// the gauge's calibration (transfer), the store (buffered append, and the
// daemon's own flush loop writing, compressing and fsyncing every 100 ms in
// a goroutine beside it), the live state behind /metrics (and a scrape of
// /metrics for every simulated second), the alarm engine (a limit alarm on
// every pressure, its state attached to the store as the daemon does), and
// the combined gauge fed by three members. The readings are the simulated
// instruments' own, taken beforehand at 20 Hz an hour into the pump-down,
// and replayed with times moving on. samples/s is per wall second from one
// goroutine; samples/cpu-s divides by all the CPU time the process used
// (flush loop and garbage collector included): samples per second of one
// core.
func BenchmarkPipeline(b *testing.B) {
	clock := &settableClock{}
	t0 := time.Date(2031, 5, 6, 20, 0, 0, 0, time.UTC)
	clock.set(t0)
	cfg, err := config.ParseConfig("pipeline.yaml", []byte(pipelineConfig(b.TempDir())))
	if err != nil {
		b.Fatal(err)
	}
	d, err := New(cfg, Options{Clock: clock, Log: slog.New(slog.DiscardHandler)})
	if err != nil {
		b.Fatal(err)
	}
	d.ln.Close() // no HTTP server: /metrics is served in-process below
	st, err := alarmstore.Open(d.store.Bolt())
	if err != nil {
		b.Fatal(err)
	}
	if _, err := d.alarms.Attach(st); err != nil {
		b.Fatal(err)
	}

	// The readings: one simulated minute of every polled gauge.
	const step, steps = 50 * time.Millisecond, 1200
	var polled []*gauge
	for _, l := range d.links {
		polled = append(polled, l.gauges...)
	}
	ctx := context.Background()
	readings := make([][]drivers.Reading, steps)
	for k := range readings {
		clock.set(t0.Add(time.Hour + time.Duration(k)*step))
		for _, g := range polled {
			r, err := g.drv.Read(ctx)
			if err != nil {
				b.Fatalf("%s: %v", g.name, err)
			}
			readings[k] = append(readings[k], r)
		}
	}

	flushCtx, stopFlush := context.WithCancel(ctx)
	var wg sync.WaitGroup
	wg.Go(func() { d.flushLoop(flushCtx) })
	h := d.handler()
	log := d.log
	const scrapeEvery = 15 * time.Second
	perScrape := len(polled) * int(scrapeEvery/step)
	cpu0 := cpuTime(b)
	wall0 := time.Now()
	for i := 0; b.Loop(); i++ {
		k, gi := i/len(polled), i%len(polled)
		r := readings[k%steps][gi]
		r.At = r.At.Add(time.Duration(k/steps) * steps * step) // the replay goes on in time
		if gi == 0 {
			clock.set(r.At)
		}
		d.handle(ctx, log, polled[gi], r, nil)
		if i%perScrape == perScrape-1 {
			rec := httptest.NewRecorder()
			h.ServeHTTP(rec, httptest.NewRequest(http.MethodGet, "/metrics", nil))
			if rec.Code != http.StatusOK {
				b.Fatalf("/metrics: %d", rec.Code)
			}
		}
	}
	stopFlush()
	wg.Wait() // the loop's last flush writes what is left
	cpu, wall := cpuTime(b)-cpu0, time.Since(wall0)
	stats := d.store.Stats()
	if err := d.store.Close(); err != nil {
		b.Fatal(err)
	}
	if stats.Dropped != 0 || stats.Rejected != 0 || stats.Buffered != 0 {
		b.Fatalf("store dropped %d, rejected %d (%v), left %d buffered", stats.Dropped, stats.Rejected, stats.LastRejected, stats.Buffered)
	}
	b.ReportMetric(float64(b.N)/wall.Seconds(), "samples/s")
	b.ReportMetric(float64(b.N)/cpu.Seconds(), "samples/cpu-s")
}
