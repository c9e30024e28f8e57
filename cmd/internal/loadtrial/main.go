// Command loadtrial measures what the daemon costs at rest: it builds
// holdfast, runs it ("holdfast run") on simulated gauges for a set time, and
// prints the CPU it used as a share of one core and its peak resident
// memory, against the targets (under 1 % of a core and 30 MB for 16 gauges
// at 10 Hz). It exits 1 when a figure is over its target.
//
//	go run ./cmd/internal/loadtrial                 # 16 gauges, 10 Hz, 60 s
//	go run ./cmd/internal/loadtrial -for 10s -gauges 64 -rate 20
//
// CPU is the process's user and system time (from wait4's rusage, over the
// whole run, and from /proc/PID/stat over the steady part after -settle);
// peak RSS is the kernel's high-water mark (rusage ru_maxrss). On a machine
// shared with other work the CPU figure is pessimistic: cache and scheduler
// contention lengthen the daemon's own work.
package main

import (
	"bytes"
	"encoding/json"
	"errors"
	"flag"
	"fmt"
	"io"
	"net"
	"net/http"
	"os"
	"os/exec"
	"path/filepath"
	"strconv"
	"strings"
	"syscall"
	"time"
)

// userHZ is the unit of the times in /proc/PID/stat: USER_HZ, 100 on Linux
// (the kernel reports in these ticks whatever its own tick rate).
const userHZ = 100

type trial struct {
	gauges  int
	rate    float64
	dur     time.Duration
	settle  time.Duration
	bin     string
	maxCPU  float64
	maxRSS  float64
	workDir string
}

func main() {
	var tr trial
	flag.IntVar(&tr.gauges, "gauges", 16, "simulated gauges (spread over links of at most 8)")
	flag.Float64Var(&tr.rate, "rate", 10, "polls per second per gauge")
	flag.DurationVar(&tr.dur, "for", 60*time.Second, "how long the daemon runs")
	flag.DurationVar(&tr.settle, "settle", 10*time.Second, "start-up time left out of the steady CPU figure")
	flag.StringVar(&tr.bin, "bin", "", "holdfast binary to run (default: go build ./cmd/holdfast into a temporary directory)")
	flag.Float64Var(&tr.maxCPU, "max-cpu", 1, "target: CPU, % of one core")
	flag.Float64Var(&tr.maxRSS, "max-rss", 30, "target: peak RSS, MB (10^6 bytes)")
	flag.Parse()
	if err := tr.run(os.Stdout); err != nil {
		fmt.Fprintf(os.Stderr, "loadtrial: %v\n", err)
		os.Exit(1)
	}
}

func (tr *trial) run(out io.Writer) (err error) {
	if tr.gauges < 1 || !(tr.rate > 0) || tr.rate > 100 || tr.dur <= tr.settle {
		return fmt.Errorf("want -gauges ≥ 1, -rate in (0, 100] and -for longer than -settle (%s), got %d, %g, %s", tr.settle, tr.gauges, tr.rate, tr.dur)
	}
	if tr.workDir, err = os.MkdirTemp("", "holdfast-load-"); err != nil {
		return err
	}
	defer os.RemoveAll(tr.workDir)
	if tr.bin == "" {
		tr.bin = filepath.Join(tr.workDir, "holdfast")
		build := exec.Command("go", "build", "-o", tr.bin, "./cmd/holdfast")
		build.Stdout, build.Stderr = os.Stderr, os.Stderr
		if err := build.Run(); err != nil {
			return fmt.Errorf("go build ./cmd/holdfast (run from the repository's top): %w", err)
		}
	}
	addr, err := freeAddr()
	if err != nil {
		return err
	}
	cfgPath := filepath.Join(tr.workDir, "load.yaml")
	if err := os.WriteFile(cfgPath, []byte(tr.config(addr)), 0o600); err != nil {
		return err
	}
	var logs bytes.Buffer
	cmd := exec.Command(tr.bin, "run", "--config", cfgPath, "--log-level", "warn")
	cmd.Stdout, cmd.Stderr = &logs, &logs
	if err := cmd.Start(); err != nil {
		return err
	}
	started := time.Now()
	defer func() {
		if cmd.ProcessState == nil {
			cmd.Process.Kill()
			cmd.Wait()
		}
		if err != nil && logs.Len() > 0 {
			err = fmt.Errorf("%w\ndaemon log:\n%s", err, logs.String())
		}
	}()
	if err := waitHealthy(addr, 20*time.Second); err != nil {
		return err
	}
	time.Sleep(tr.settle - time.Since(started))
	cpu0, err := procCPU(cmd.Process.Pid)
	if err != nil {
		return err
	}
	steady0 := time.Now()
	time.Sleep(tr.dur - time.Since(started))
	cpu1, err := procCPU(cmd.Process.Pid)
	if err != nil {
		return err
	}
	steadyWall := time.Since(steady0)
	samples, err := storedSamples(addr)
	if err != nil {
		return err
	}
	if err := cmd.Process.Signal(syscall.SIGTERM); err != nil {
		return err
	}
	if err := cmd.Wait(); err != nil {
		return fmt.Errorf("holdfast run ended with %w on SIGTERM", err)
	}
	wall := time.Since(started)
	ru, ok := cmd.ProcessState.SysUsage().(*syscall.Rusage)
	if !ok {
		return errors.New("no resource usage for the daemon on this system")
	}
	total := time.Duration(ru.Utime.Nano() + ru.Stime.Nano())
	wholePct := 100 * total.Seconds() / wall.Seconds()
	steadyPct := 100 * (cpu1 - cpu0).Seconds() / steadyWall.Seconds()
	peakMB := float64(ru.Maxrss) * 1024 / 1e6 // ru_maxrss is in KiB on Linux
	expect := int(float64(tr.gauges) * tr.rate * tr.dur.Seconds())
	fmt.Fprintf(out, "holdfast run: %d simulated gauges at %g Hz for %s (%s wall)\n", tr.gauges, tr.rate, tr.dur, wall.Round(10*time.Millisecond))
	fmt.Fprintf(out, "samples stored: %d (about %d expected)\n", samples, expect)
	fmt.Fprintf(out, "CPU: %.2f %% of one core over the whole run (%s), %.2f %% steady (after %s)\n", wholePct, total.Round(time.Millisecond), steadyPct, tr.settle)
	fmt.Fprintf(out, "peak RSS: %.1f MB (%.1f MiB)\n", peakMB, float64(ru.Maxrss)/1024)
	var over []string
	if wholePct >= tr.maxCPU {
		over = append(over, fmt.Sprintf("CPU %.2f %% ≥ %g %%", wholePct, tr.maxCPU))
	}
	if peakMB >= tr.maxRSS {
		over = append(over, fmt.Sprintf("peak RSS %.1f MB ≥ %g MB", peakMB, tr.maxRSS))
	}
	if samples < expect*9/10 {
		over = append(over, fmt.Sprintf("only %d of about %d samples stored", samples, expect))
	}
	if len(over) > 0 {
		return errors.New("over target: " + strings.Join(over, "; "))
	}
	fmt.Fprintf(out, "within targets (CPU < %g %%, peak RSS < %g MB)\n", tr.maxCPU, tr.maxRSS)
	return nil
}

// config is a chamber's worth of simulated gauges, on links of at most 8.
func (tr *trial) config(addr string) string {
	var b strings.Builder
	links := (tr.gauges + 7) / 8
	fmt.Fprintf(&b, "chamber: {name: load-trial, volume: 30 L}\nhttp: {listen: %q}\nstore: {dir: %s}\nlinks:\n", addr, filepath.Join(tr.workDir, "data"))
	for l := range links {
		fmt.Fprintf(&b, "  bus-%d: {simulator: {rough_pump: {speed: 5 m3/h, ultimate: 1 Pa}, high_pump: {speed: 60 L/s, ultimate: 1e-6 Pa}, crossover: 10 Pa, seed: %d}}\n", l, l+1)
	}
	b.WriteString("gauges:\n")
	kinds := []string{"pirani", "cdg", "ion", "thermocouple"}
	interval := time.Duration(float64(time.Second) / tr.rate)
	for i := range tr.gauges {
		kind := kinds[i%len(kinds)]
		extra := ", kind: pressure"
		switch kind {
		case "cdg":
			extra += ", full_scale: 133 kPa"
		case "thermocouple":
			extra = ", kind: temperature"
		}
		fmt.Fprintf(&b, "  g%02d: {link: bus-%d, driver: sim, instrument: %s%s, interval: %s}\n", i, i/8, kind, extra, interval)
	}
	b.WriteString("alarms:\n  - {name: rough, gauge: g00, above: 1 kPa, for: 5s, severity: low}\n")
	return b.String()
}

// freeAddr is a loopback address with a port free a moment ago.
func freeAddr() (string, error) {
	ln, err := net.Listen("tcp", "127.0.0.1:0")
	if err != nil {
		return "", err
	}
	defer ln.Close()
	return ln.Addr().String(), nil
}

func waitHealthy(addr string, within time.Duration) error {
	deadline := time.Now().Add(within)
	for time.Now().Before(deadline) {
		if resp, err := http.Get("http://" + addr + "/healthz"); err == nil {
			resp.Body.Close()
			if resp.StatusCode == http.StatusOK {
				return nil
			}
		}
		time.Sleep(50 * time.Millisecond)
	}
	return fmt.Errorf("the daemon was not healthy on %s within %s", addr, within)
}

// procCPU is the user and system time of a running process.
func procCPU(pid int) (time.Duration, error) {
	b, err := os.ReadFile(fmt.Sprintf("/proc/%d/stat", pid))
	if err != nil {
		return 0, fmt.Errorf("CPU of the daemon (Linux /proc needed): %w", err)
	}
	// Fields after the command name, which is in parentheses and may hold spaces.
	f := strings.Fields(string(b[bytes.LastIndexByte(b, ')')+1:]))
	if len(f) < 13 {
		return 0, fmt.Errorf("/proc/%d/stat: too few fields", pid)
	}
	utime, err1 := strconv.ParseInt(f[11], 10, 64) // field 14 of stat(5)
	stime, err2 := strconv.ParseInt(f[12], 10, 64) // field 15
	if err := errors.Join(err1, err2); err != nil {
		return 0, fmt.Errorf("/proc/%d/stat: %w", pid, err)
	}
	return time.Duration(utime+stime) * time.Second / userHZ, nil
}

// storedSamples asks the daemon how many samples its store holds.
func storedSamples(addr string) (int, error) {
	resp, err := http.Get("http://" + addr + "/api/v1/db/stats")
	if err != nil {
		return 0, err
	}
	defer resp.Body.Close()
	var st struct {
		Samples int `json:"samples"`
	}
	if err := json.NewDecoder(resp.Body).Decode(&st); err != nil {
		return 0, fmt.Errorf("/api/v1/db/stats: %w", err)
	}
	return st.Samples, nil
}
