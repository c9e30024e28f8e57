package daemon

import (
	"flag"
	"fmt"
	"math"
	"net/http"
	"os"
	"runtime"
	"runtime/debug"
	"strconv"
	"strings"
	"testing"
	"time"

	"holdfast/daemon/config"
	"holdfast/daemon/store"
)

var (
	soakFor   = flag.Duration("soak", 0, "TestSoak: how long the daemon runs (e.g. 60s); 0 skips the soak")
	soakTrace = flag.Bool("soak.trace", false, "TestSoak: log memory and goroutines every tenth of the run, not only at the two points compared")
)

func mib(b int64) float64 { return float64(b) / (1 << 20) }

// Soak shape: 64 gauges at 20 Hz, on 8 simulated links of 8 (as 8 RS-485
// buses would carry them).
const (
	soakLinks         = 8
	soakGaugesPerLink = 8
	soakInterval      = 50 * time.Millisecond
)

func soakConfig(dir string) string {
	var b strings.Builder
	fmt.Fprintf(&b, "chamber: {name: soak, volume: 30 L}\nhttp: {listen: \"127.0.0.1:0\"}\nstore: {dir: %s}\nlinks:\n", dir)
	for l := range soakLinks {
		fmt.Fprintf(&b, "  bus-%d: {simulator: {rough_pump: {speed: 5 m3/h, ultimate: 1 Pa}, high_pump: {speed: 60 L/s, ultimate: 1e-6 Pa}, crossover: 10 Pa, seed: %d}}\n", l, l+1)
	}
	b.WriteString("gauges:\n")
	kinds := []string{"pirani", "cdg", "ion", "thermocouple"}
	for l := range soakLinks {
		for g := range soakGaugesPerLink {
			kind := kinds[g%len(kinds)]
			extra := ", kind: pressure"
			switch kind {
			case "cdg":
				extra += ", full_scale: 133 kPa"
			case "thermocouple":
				extra = ", kind: temperature"
			}
			fmt.Fprintf(&b, "  g%d-%d: {link: bus-%d, driver: sim, instrument: %s%s, interval: %s}\n", l, g, l, kind, extra, soakInterval)
		}
	}
	b.WriteString("alarms:\n")
	for l := range soakLinks {
		fmt.Fprintf(&b, "  - {name: rough-%d, gauge: g%d-0, above: 1 kPa, for: 5s, severity: low}\n", l, l)
	}
	return b.String()
}

// memStatus reads VmRSS and its anonymous and file-backed parts (the
// mapped store file) from /proc/self/status, after a collection that hands
// freed memory back, so it measures what is kept, not garbage.
func memStatus(t *testing.T) (rss, anon, file int64) {
	t.Helper()
	debug.FreeOSMemory()
	b, err := os.ReadFile("/proc/self/status")
	if err != nil {
		t.Skipf("no /proc/self/status: %v", err)
	}
	fields := map[string]*int64{"VmRSS:": &rss, "RssAnon:": &anon, "RssFile:": &file}
	for line := range strings.Lines(string(b)) {
		name, v, _ := strings.Cut(line, "\t")
		if p := fields[name]; p != nil {
			kb, err := strconv.ParseInt(strings.TrimSpace(strings.TrimSuffix(strings.TrimSpace(v), "kB")), 10, 64)
			if err != nil {
				t.Fatalf("/proc/self/status %s %q: %v", name, v, err)
			}
			*p = kb << 10
		}
	}
	if rss == 0 {
		t.Fatal("no VmRSS in /proc/self/status")
	}
	return rss, anon, file
}

// soakPoint is what the soak records at one moment.
type soakPoint struct {
	at         time.Duration // since the start
	goroutines int
	rss        int64  // VmRSS
	anon, file int64  // its parts: RssAnon, RssFile
	heap       uint64 // the Go heap in use
	polls      uint64
}

// missedSlots counts, in one gauge's stored times, the poll slots with no
// sample: the slots the span from the first to the last sample holds, less
// the samples after the first. Polls run on a fixed schedule and a late
// one skips the slots it overran (pollLink), so a poll late by less than
// an interval misses nothing, and a skipped slot is missing for good.
func missedSlots(times []time.Time, interval time.Duration) int {
	if len(times) < 2 {
		return 0
	}
	slots := int(math.Round(float64(times[len(times)-1].Sub(times[0])) / float64(interval)))
	return max(slots-(len(times)-1), 0)
}

// settledGoroutines is the fewest goroutines seen in five looks 20 ms
// apart: a request being served or a flush under way comes and goes; a
// leaked goroutine stays.
func settledGoroutines() int {
	n := runtime.NumGoroutine()
	for range 4 {
		time.Sleep(20 * time.Millisecond) // sampling a count, not timing logic
		n = min(n, runtime.NumGoroutine())
	}
	return n
}

// watchStalls runs a bystander goroutine that sleeps 10 ms at a time and
// notes (since start, to 0.1 s) each time it overslept by more than a poll
// interval: then the whole process went unscheduled, which no poller can
// help. The notes are complete once stop returns.
func watchStalls(start time.Time) (*[]time.Duration, func()) {
	var stalls []time.Duration
	quit, done := make(chan struct{}), make(chan struct{})
	go func() {
		defer close(done)
		for {
			t := time.Now()
			select {
			case <-quit:
				return
			case <-time.After(10 * time.Millisecond):
			}
			if time.Since(t) > 10*time.Millisecond+soakInterval {
				stalls = append(stalls, t.Sub(start).Round(100*time.Millisecond))
			}
		}
	}()
	return &stalls, func() { close(quit); <-done }
}

// loadAverage is the first figure of /proc/loadavg, for the log.
func loadAverage() string {
	b, _ := os.ReadFile("/proc/loadavg")
	f := strings.Fields(string(b))
	if len(f) == 0 {
		return "unknown"
	}
	return f[0]
}

// The soak: 64 simulated gauges at 20 Hz for -soak (e.g. 60s), /metrics
// scraped every second. It fails on
//   - a dropped poll: a scheduled slot of a gauge with no stored sample
//     (missedSlots over each gauge's whole series);
//   - a dropped sample: a completed poll with no stored sample (polls
//     counted by the daemon against samples in the store after the stop;
//     a poll under way on each link at the stop may end without one), or
//     any point the store dropped or refused;
//   - goroutine growth: more goroutines at the end than at the early point
//     (a fifth of the way in), each the fewest of five looks;
//   - resident memory (VmRSS) at the end more than 10 % away from the
//     early point's.
func TestSoak(t *testing.T) {
	if *soakFor <= 0 {
		t.Skip("soak: run with -soak=60s")
	}
	dir := t.TempDir()
	cfg, err := config.ParseConfig("soak.yaml", []byte(soakConfig(dir)))
	if err != nil {
		t.Fatal(err)
	}
	d, err := New(cfg, Options{})
	if err != nil {
		t.Fatal(err)
	}
	start := time.Now()
	stalls, stopWatch := watchStalls(start)
	stop := runInBackground(t, d)
	client := &http.Client{Transport: &http.Transport{DisableKeepAlives: true}} // no idle connections to count as goroutines
	early := *soakFor / 5
	var first soakPoint
	traced := 0
	record := func() soakPoint {
		p := soakPoint{at: time.Since(start), goroutines: settledGoroutines(), polls: d.progress.polls.Load()}
		p.rss, p.anon, p.file = memStatus(t)
		var ms runtime.MemStats
		runtime.ReadMemStats(&ms)
		p.heap = ms.HeapInuse
		t.Logf("at %s: %d goroutines, VmRSS %.1f MiB (anonymous %.1f, file %.1f), Go heap in use %.1f MiB",
			p.at.Round(time.Second), p.goroutines, mib(p.rss), mib(p.anon), mib(p.file), mib(int64(p.heap)))
		return p
	}
	for tick := time.NewTicker(time.Second); time.Since(start) < *soakFor; <-tick.C {
		resp, err := client.Get("http://" + d.Addr() + "/metrics")
		if err != nil || resp.StatusCode != http.StatusOK {
			t.Fatalf("scrape: %v", err)
		}
		resp.Body.Close()
		since := time.Since(start)
		if first.at == 0 && since >= early {
			first = record()
		} else if *soakTrace && since >= time.Duration(traced+1)**soakFor/10 {
			traced++
			record()
		}
	}
	last := record()
	stats := d.store.Stats()
	stop()
	stopWatch()
	polls := d.progress.polls.Load()

	db, err := store.Open(StorePath(dir), store.Options{ReadOnly: true})
	if err != nil {
		t.Fatal(err)
	}
	defer db.Close()
	stored, missed := 0, 0
	gaps := map[time.Duration]int{} // long gaps by when they began, to tell one stall of the process from a slow gauge
	for _, g := range d.GaugeNames() {
		var times []time.Time
		if err := db.Range(g, start.Add(-time.Minute), time.Now().Add(time.Minute), func(p store.Point) bool {
			times = append(times, p.At)
			return true
		}); err != nil {
			t.Fatalf("read %s: %v", g, err)
		}
		stored += len(times)
		missed += missedSlots(times, soakInterval)
		for i := 1; i < len(times); i++ {
			if gap := times[i].Sub(times[i-1]); gap > 3*soakInterval/2 {
				gaps[times[i-1].Sub(start).Round(100*time.Millisecond)]++
			}
		}
	}
	if len(gaps) > 0 {
		t.Logf("gaps over 1.5 intervals, by when they began (since the start, to 0.1 s): %v", gaps)
		t.Logf("a goroutine that only sleeps 10 ms at a time overslept by more than an interval %d times: %v", len(*stalls), *stalls)
	}
	t.Logf("soak %s, %d gauges at %s: %d polls, %d samples stored, %d slots missed, store dropped %d and refused %d; load average %s on %d CPUs",
		*soakFor, soakLinks*soakGaugesPerLink, soakInterval, polls, stored, missed, stats.Dropped, stats.Rejected, loadAverage(), runtime.NumCPU())
	t.Logf("at %s: %d goroutines, VmRSS %.1f MiB; at %s: %d goroutines, VmRSS %.1f MiB (%+.1f %%)",
		first.at.Round(time.Second), first.goroutines, float64(first.rss)/(1<<20),
		last.at.Round(time.Second), last.goroutines, float64(last.rss)/(1<<20), 100*(float64(last.rss)/float64(first.rss)-1))
	if missed > 0 {
		t.Errorf("%d poll slots without a sample (dropped polls); on a busy machine (load average %s on %d CPUs) a stall of the whole process over an interval skips a slot of every gauge: rerun on a quieter one before blaming the daemon",
			missed, loadAverage(), runtime.NumCPU())
	}
	if polls < uint64(stored) || polls > uint64(stored+soakLinks) || stats.Dropped != 0 || stats.Rejected != 0 {
		t.Errorf("%d polls completed, %d samples stored; the store dropped %d and refused %d (%v)",
			polls, stored, stats.Dropped, stats.Rejected, stats.LastRejected)
	}
	if last.goroutines > first.goroutines {
		t.Errorf("goroutines grew from %d to %d", first.goroutines, last.goroutines)
	}
	if r := float64(last.rss) / float64(first.rss); r > 1.1 || r < 0.9 {
		t.Errorf("VmRSS went from %d to %d bytes (×%.3f); want within 10 %%", first.rss, last.rss, r)
	}
}
