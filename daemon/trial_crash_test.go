package daemon

import (
	"bufio"
	"context"
	"flag"
	"fmt"
	"io"
	"log/slog"
	"math"
	"math/rand/v2"
	"net/http"
	"os"
	"os/exec"
	"path/filepath"
	"strings"
	"syscall"
	"testing"
	"time"

	"holdfast/alerts"
	"holdfast/daemon/alarmstore"
	"holdfast/daemon/config"
	"holdfast/daemon/store"
)

var (
	crashCount = flag.Int("crash.count", 20, "TestCrashTrial: how many times the daemon is SIGKILLed")
	crashSeed  = flag.Uint64("crash.seed", 0, "TestCrashTrial: seed for the kill moments (0: from the clock; the test logs it)")
)

// crashTrialEnv holds the config path of the daemon a TestCrashHelper child runs.
const crashTrialEnv = "HOLDFAST_CRASH_TRIAL_DAEMON"

// crashTrialConfig is a small chamber that pumps down in under half a
// second of wall time (1 L, 50 m3/h: a time constant V/S of 72 ms), so
// every run of the daemon, which starts the simulated chamber at
// atmosphere, raises and clears alarms within the few hundred
// milliseconds it lives. Four gauges at 50 Hz and a flush every 40 ms make
// many small commits for a kill to land between or inside.
const crashTrialConfig = `
chamber: {name: crash-trial, volume: 1 L}
http: {listen: "127.0.0.1:0", token_file: DIR/token}
store: {dir: DIR/data, flush_every: 40ms}
links:
  rig:
    simulator:
      rough_pump: {speed: 50 m3/h, ultimate: 1 Pa}
      high_pump: {speed: 200 L/s, ultimate: 1e-5 Pa}
      crossover: 5 Pa
      seed: 11
gauges:
  rough-a: {link: rig, driver: sim, instrument: pirani, kind: pressure, interval: 20ms, timeout: 200ms}
  rough-b: {link: rig, driver: sim, instrument: pirani, kind: pressure, interval: 20ms, timeout: 200ms}
  fore-cdg: {link: rig, driver: sim, instrument: cdg, full_scale: 133 kPa, kind: pressure, interval: 20ms, timeout: 200ms}
  wall: {link: rig, driver: sim, instrument: thermocouple, kind: temperature, interval: 20ms, timeout: 200ms}
alarms:
  - {name: vented, gauge: rough-a, above: 30 kPa, severity: low}
  - {name: rough, gauge: rough-a, above: 3 kPa, severity: low}
  - {name: cdg-rough, gauge: fore-cdg, above: 300 Pa, for: 40ms, severity: high}
`

// TestCrashHelper is not a test: TestCrashTrial runs it in a child process
// as the daemon, exactly as holdfast run wires it (the wall clock, the
// config from its file), and SIGKILLs it.
func TestCrashHelper(t *testing.T) {
	path := os.Getenv(crashTrialEnv)
	if path == "" {
		t.Skip("helper for TestCrashTrial")
	}
	cfg, err := config.LoadConfig(path)
	if err != nil {
		fmt.Println("config:", err)
		os.Exit(2)
	}
	d, err := New(cfg, Options{Log: slog.New(slog.NewTextHandler(os.Stderr, &slog.HandlerOptions{Level: slog.LevelError}))})
	if err != nil {
		fmt.Println("new:", err)
		os.Exit(2)
	}
	fmt.Println("listening", d.Addr())
	ctx, cancel := context.WithTimeout(context.Background(), time.Minute) // never outlive a vanished parent
	defer cancel()
	if err := d.Run(ctx); err != nil {
		fmt.Println("run:", err)
	}
	os.Exit(3)
}

// A committed state is what a SIGKILL may not take away: every sample of
// every series and every alarm history entry, in stored order.
type committed struct {
	series  map[string][]store.Point
	history []alerts.Event
}

// readCommitted opens the store file at path read-only and reads all of it.
// Opening it proves the file is sound and its lock free; a chunk that does
// not decode fails the test.
func readCommitted(t *testing.T, path string) committed {
	t.Helper()
	db, err := store.Open(path, store.Options{ReadOnly: true})
	if err != nil {
		t.Fatalf("open %s read-only: %v", path, err)
	}
	defer db.Close()
	c := committed{series: map[string][]store.Point{}}
	names, err := db.Series()
	if err != nil {
		t.Fatalf("%s: series: %v", path, err)
	}
	for _, s := range names {
		var pts []store.Point
		err := db.Range(s, time.Unix(0, math.MinInt64), time.Unix(0, math.MaxInt64), func(p store.Point) bool {
			pts = append(pts, p)
			return true
		})
		if err != nil {
			t.Fatalf("%s: read %s: %v", path, s, err)
		}
		c.series[s] = pts
	}
	if c.history, err = alarmstore.Wrap(db.Bolt()).History("", time.Time{}, 0); err != nil {
		t.Fatalf("%s: alarm history: %v", path, err)
	}
	return c
}

// samePoint compares every stored field; NaN values (no value) are equal.
func samePoint(a, b store.Point) bool {
	sameFloat := func(x, y float64) bool { return x == y || math.IsNaN(x) && math.IsNaN(y) }
	return a.At.Equal(b.At) && sameFloat(a.Raw, b.Raw) && sameFloat(a.Value, b.Value) &&
		a.Quality == b.Quality && a.Calibration == b.Calibration
}

// keeps checks that now holds all of was, unchanged, as a prefix of each
// series and of the history: nothing committed was lost, altered or
// reordered, and nothing came in before it.
func (now committed) keeps(t *testing.T, was committed, what string) {
	t.Helper()
	for s, old := range was.series {
		got := now.series[s]
		if len(got) < len(old) {
			t.Fatalf("%s: %s has %d samples, %d were committed", what, s, len(got), len(old))
		}
		for i := range old {
			if !samePoint(got[i], old[i]) {
				t.Fatalf("%s: %s sample %d is %+v, was committed as %+v", what, s, i, got[i], old[i])
			}
		}
	}
	if len(now.history) < len(was.history) {
		t.Fatalf("%s: %d alarm history entries, %d were committed", what, len(now.history), len(was.history))
	}
	for i, ev := range was.history {
		if g := now.history[i]; g.DedupeKey != ev.DedupeKey || !g.At.Equal(ev.At) || g.Kind != ev.Kind {
			t.Fatalf("%s: history entry %d is %s %s at %s, was committed as %s %s at %s", what, i,
				g.DedupeKey, g.Kind, g.At.Format(time.RFC3339Nano), ev.DedupeKey, ev.Kind, ev.At.Format(time.RFC3339Nano))
		}
	}
}

// sound checks the invariants a kill must not break: each series strictly
// in time order (no sample stored twice), and each alarm's transitions
// numbered upward, never reused, raised and cleared in turn (an alarm
// whose state was lost would be raised again while active).
func (c committed) sound(t *testing.T, what string) {
	t.Helper()
	for s, pts := range c.series {
		for i := 1; i < len(pts); i++ {
			if !pts[i].At.After(pts[i-1].At) {
				t.Fatalf("%s: %s sample %d at %s (%+v) does not follow sample %d at %s (%+v)", what, s, i,
					pts[i].At.Format(time.RFC3339Nano), pts[i], i-1, pts[i-1].At.Format(time.RFC3339Nano), pts[i-1])
			}
		}
	}
	seq := map[string]uint64{}
	active := map[string]bool{}
	keys := map[string]bool{}
	for _, ev := range c.history {
		if keys[ev.DedupeKey] {
			t.Fatalf("%s: transition %s stored twice", what, ev.DedupeKey)
		}
		keys[ev.DedupeKey] = true
		if ev.Seq <= seq[ev.Alarm] {
			t.Fatalf("%s: %s transition %d after %d", what, ev.Alarm, ev.Seq, seq[ev.Alarm])
		}
		seq[ev.Alarm] = ev.Seq
		switch ev.Kind {
		case alerts.Raised:
			if active[ev.Alarm] {
				t.Fatalf("%s: %s raised again while active (%s)", what, ev.Alarm, ev.DedupeKey)
			}
			active[ev.Alarm] = true
		case alerts.Cleared:
			if !active[ev.Alarm] {
				t.Fatalf("%s: %s cleared while not active (%s)", what, ev.Alarm, ev.DedupeKey)
			}
			active[ev.Alarm] = false
		}
	}
}

// crashDaemon is one run of the child daemon.
type crashDaemon struct {
	cmd   *exec.Cmd
	addr  chan string // the listen address, once
	start time.Time
}

func startCrashDaemon(t *testing.T, cfgPath string) *crashDaemon {
	t.Helper()
	cmd := exec.Command(os.Args[0], "-test.run=^TestCrashHelper$")
	cmd.Env = append(os.Environ(), crashTrialEnv+"="+cfgPath)
	cmd.Stderr = t.Output()
	out, err := cmd.StdoutPipe()
	if err != nil {
		t.Fatal(err)
	}
	c := &crashDaemon{cmd: cmd, addr: make(chan string, 1), start: time.Now()}
	if err := cmd.Start(); err != nil {
		t.Fatal(err)
	}
	go func() {
		sc := bufio.NewScanner(out)
		for sc.Scan() {
			if a, ok := strings.CutPrefix(sc.Text(), "listening "); ok {
				c.addr <- a
			} else {
				t.Logf("daemon: %s", sc.Text())
			}
		}
		io.Copy(io.Discard, out)
	}()
	return c
}

// ready waits until the daemon answers /healthz with 200 and every gauge
// has a sample: the store opened, the lock was free, polling runs.
func (c *crashDaemon) ready(t *testing.T) string {
	t.Helper()
	var addr string
	select {
	case addr = <-c.addr:
	case <-time.After(20 * time.Second):
		t.Fatal("the restarted daemon did not start listening within 20 s")
	}
	deadline := time.Now().Add(20 * time.Second)
	for time.Now().Before(deadline) {
		if healthy(addr) && len(apiGaugeList(t, addr)) == 4 && allSeen(t, addr) {
			return addr
		}
		time.Sleep(5 * time.Millisecond) // waiting for a real process, not timing logic
	}
	t.Fatal("the restarted daemon was not healthy with every gauge read within 20 s")
	return ""
}

func healthy(addr string) bool {
	resp, err := http.Get("http://" + addr + "/healthz")
	if err != nil {
		return false
	}
	resp.Body.Close()
	return resp.StatusCode == http.StatusOK
}

func allSeen(t *testing.T, addr string) bool {
	for _, g := range apiGaugeList(t, addr) {
		if g.At.IsZero() {
			return false
		}
	}
	return true
}

// backup fetches a consistent copy of the committed store through the API
// (one read transaction) and reads it: what the daemon reports as stored.
func backup(t *testing.T, addr, token, path string) committed {
	t.Helper()
	req, _ := http.NewRequest(http.MethodPost, "http://"+addr+"/api/v1/db/backup", nil)
	req.Header.Set("Authorization", "Bearer "+token)
	resp, err := http.DefaultClient.Do(req)
	if err != nil {
		t.Fatalf("backup: %v", err)
	}
	defer resp.Body.Close()
	f, err := os.Create(path)
	if err != nil {
		t.Fatal(err)
	}
	_, err = io.Copy(f, resp.Body)
	if cerr := f.Close(); err == nil {
		err = cerr
	}
	if err != nil || resp.StatusCode != http.StatusOK || resp.Trailer.Get("Holdfast-Backup-Bytes") == "" {
		t.Fatalf("backup: status %d, err %v, complete %q", resp.StatusCode, err, resp.Trailer.Get("Holdfast-Backup-Bytes"))
	}
	return readCommitted(t, path)
}

func (c *crashDaemon) kill(t *testing.T) {
	t.Helper()
	if err := c.cmd.Process.Signal(syscall.SIGKILL); err != nil {
		t.Fatalf("SIGKILL: %v", err)
	}
	err := c.cmd.Wait()
	if ws, ok := c.cmd.ProcessState.Sys().(syscall.WaitStatus); !ok || !ws.Signaled() || ws.Signal() != syscall.SIGKILL {
		t.Fatalf("the daemon ended before the kill: %v", err) // a run that exited on its own proves nothing
	}
}

// The crash trial: a real daemon process is SIGKILLed at random moments
// (seeded; -crash.seed repeats a run), some during its start, most while it
// polls, flushes and records alarm transitions. After each kill the store
// opens read-only (sound, lock free) and holds, unchanged and in order,
// everything committed before: what the daemon's backup API showed, and
// all that the previous kill left. The daemon then restarts on the same
// file and becomes healthy.
func TestCrashTrial(t *testing.T) {
	if testing.Short() {
		t.Skip("-short: the crash trial runs the daemon 20 times")
	}
	seed := *crashSeed
	if seed == 0 {
		seed = uint64(time.Now().UnixNano())
	}
	t.Logf("crash trial: %d kills, seed %d (repeat with -crash.seed %d)", *crashCount, seed, seed)
	rng := rand.New(rand.NewPCG(seed, 0))
	dir := t.TempDir()
	token := "crash-trial-token-0123456789"
	writeSecret(t, dir, "token", token)
	cfgPath := filepath.Join(dir, "holdfast.yaml")
	if err := os.WriteFile(cfgPath, []byte(strings.ReplaceAll(crashTrialConfig, "DIR", dir)), 0o600); err != nil {
		t.Fatal(err)
	}
	dbPath := StorePath(filepath.Join(dir, "data"))
	var last committed
	var backups, duringStart int
	for round := range *crashCount {
		what := fmt.Sprintf("kill %d", round+1)
		c := startCrashDaemon(t, cfgPath)
		var seen []committed // the backups of this run
		if round > 0 && rng.IntN(5) == 0 {
			// During the start: opening the store, restoring alarms, first polls.
			duringStart++
			time.Sleep(time.Duration(rng.Int64N(int64(150 * time.Millisecond))))
		} else {
			addr := c.ready(t)
			until := time.Now().Add(time.Duration(rng.Int64N(int64(600 * time.Millisecond))))
			for n := rng.IntN(3); n > 0; n-- { // backups at random moments before the kill
				time.Sleep(time.Duration(rng.Int64N(int64(max(time.Until(until)/2, 0) + 1))))
				seen = append(seen, backup(t, addr, token, filepath.Join(dir, fmt.Sprintf("backup-%d-%d.db", round, n))))
				backups++
			}
			if !healthy(addr) {
				t.Fatalf("%s: /healthz not ok just before the kill", what)
			}
			time.Sleep(time.Until(until))
		}
		c.kill(t)
		now := readCommitted(t, dbPath)
		now.sound(t, what)
		now.keeps(t, last, what+", against the store the kill before left")
		for i, b := range seen {
			b.sound(t, what)
			now.keeps(t, b, fmt.Sprintf("%s, against backup %d", what, i+1))
		}
		last = now
	}
	final := startCrashDaemon(t, cfgPath)
	final.ready(t)
	final.kill(t)
	samples := 0
	for _, pts := range last.series {
		samples += len(pts)
	}
	t.Logf("crash trial: %d kills (%d during the start), %d backups checked, %d samples and %d alarm transitions kept",
		*crashCount, duringStart, backups, samples, len(last.history))
	if samples == 0 || len(last.history) == 0 {
		t.Fatalf("the trial committed %d samples and %d transitions: it tested nothing", samples, len(last.history))
	}
}
