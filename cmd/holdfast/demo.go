package main

import (
	"bytes"
	"context"
	_ "embed"
	"errors"
	"fmt"
	"io"
	"os"
	"path/filepath"
	"slices"
	"strings"
	"syscall"
	"time"

	"holdfast/alerts"
	"holdfast/daemon"
	"holdfast/daemon/config"
	"holdfast/drivers/sim"
)

// demoConfig is deploy/examples/demo.yaml, built in so that the demo runs
// from any directory; TestDemoConfigMatchesExample keeps the two identical.
//
//go:embed demo.yaml
var demoConfig []byte

func cmdDemo(ctx context.Context, args []string, stdout, stderr io.Writer) error {
	fs := newFlags("demo", "[flags]", stderr)
	speed := fs.Float64("speed", 60, "simulated seconds per wall second")
	dur := fs.Duration("for", 0, "stop after this much wall time, e.g. 25s (default: until interrupted)")
	listen := fs.String("listen", config.DefaultListen, "HTTP `address` for /metrics and the API")
	data := fs.String("data", "", "data `directory` (default: a fresh temporary directory, removed at exit)")
	keep := fs.Bool("keep", false, "keep the temporary data directory at exit")
	fresh := fs.Bool("fresh", false, "with --data: delete the store an earlier demo left there and start over")
	file := fs.String("config", "", "run another simulated scenario from this config `file` instead of the built-in one")
	level := fs.String("log-level", "warn", "log `level` for the daemon's log on stderr")
	if err := fs.Parse(args); err != nil {
		return err
	}
	if fs.NArg() > 0 {
		fs.Usage()
		return errUsage("demo takes no arguments, got %q", fs.Args())
	}
	if *dur < 0 {
		return errUsage("--for must be a positive duration such as 25s (or left out: until interrupted), got %s", *dur)
	}
	if *fresh && *data == "" {
		return errUsage("--fresh goes with --data DIR (the default directory is always fresh)")
	}
	if !(*speed > 0) || *speed > 1e5 {
		return errUsage("--speed must be above 0 and at most 100000 simulated seconds per wall second, got %g", *speed)
	}
	log, err := newLogger(stderr, *level)
	if err != nil {
		return err
	}
	cfg, err := demoScenario(*file)
	if err != nil {
		return configFailed(stderr, err)
	}
	dir, cleanup, err := demoDataDir(*data, *keep, stdout)
	if err != nil {
		return err
	}
	if *data != "" {
		if err := demoFresh(dir, *fresh, stdout); err != nil {
			return err
		}
	}
	defer cleanup()
	// The demo makes its own token in its data directory with any config,
	// so a config naming a token file that does not exist here still runs.
	token, err := demoToken(dir)
	if err != nil {
		return err
	}
	adjust := func(c *config.Config) { c.Store.Dir, c.HTTP.Listen, c.HTTP.TokenFile = dir, *listen, token }
	adjust(cfg)

	start := time.Now()
	clock := sim.NewClock(start, *speed)
	d, err := daemon.New(cfg, daemon.Options{Log: log, Clock: clock, OnEvent: demoPrinter(stdout, start), EventsShown: true, Adjust: adjust})
	if err != nil {
		if errors.Is(err, syscall.EADDRINUSE) {
			return fmt.Errorf("%w (another holdfast running? try --listen 127.0.0.1:0)", err)
		}
		return err
	}
	fmt.Fprintf(stdout, "holdfast demo: simulated chamber %q (%.4g L), %g simulated seconds per wall second\n",
		cfg.Chamber.Name, float64(cfg.Chamber.Volume)*1000, *speed)
	fmt.Fprintf(stdout, "metrics at http://%s/metrics, data in %s; Ctrl-C stops\n", d.Addr(), dir)
	fmt.Fprintf(stdout, "token for changes (alarms ack, calib point, holdtest start): --token-file %s\n", cfg.HTTP.TokenFile)
	if *dur > 0 {
		var cancel context.CancelFunc
		ctx, cancel = context.WithTimeout(ctx, *dur)
		defer cancel()
	}
	if err := d.Run(ctx); err != nil {
		return err
	}
	if err := demoSummary(stdout, d, dir, clock.Now().Sub(start)); err != nil {
		return err
	}
	return demoReport(stdout, cfg, start, clock.Now(), *data != "" || *keep)
}

// demoReport writes the report of the run (the daemon has stopped, so the
// data directory opens read-only) into the data directory when it is kept,
// else into the system's temporary directory, and prints its path.
func demoReport(w io.Writer, cfg *config.Config, from, to time.Time, kept bool) error {
	var buf bytes.Buffer
	if err := daemon.ReportFromDir(&buf, cfg, from, to, "html"); err != nil {
		return fmt.Errorf("report of the run: %w", err)
	}
	dir := cfg.Store.Dir
	if !kept {
		dir = os.TempDir()
	}
	path := filepath.Join(dir, daemon.ReportFileName(cfg.Chamber.Name, to, "html"))
	if err := os.WriteFile(path, buf.Bytes(), 0o644); err != nil {
		return fmt.Errorf("report of the run: %w", err)
	}
	fmt.Fprintf(w, "  report of the run: %s\n", path)
	return nil
}

// demoScenario loads the built-in scenario, or file. The demo runs on the
// simulator's fast clock, so a config that reaches real hardware (a
// serial, TCP or Modbus link) is refused: use holdfast run for that.
func demoScenario(file string) (*config.Config, error) {
	if file == "" {
		return config.ParseConfig("demo.yaml (built in)", demoConfig)
	}
	cfg, err := config.LoadConfig(file)
	if err != nil {
		return nil, err
	}
	if real := config.HardwareLinks(cfg); len(real) > 0 {
		return nil, fmt.Errorf("%s: link %s reaches real hardware; the demo runs only simulated links (use holdfast run --config %s)",
			file, strings.Join(real, ", "), file)
	}
	return cfg, nil
}

func demoDataDir(dir string, keep bool, stdout io.Writer) (string, func(), error) {
	if dir != "" {
		if err := os.MkdirAll(dir, 0o700); err != nil {
			return "", nil, fmt.Errorf("data directory: %w", err)
		}
		return dir, func() {}, nil
	}
	tmp, err := os.MkdirTemp("", "holdfast-demo-")
	if err != nil {
		return "", nil, fmt.Errorf("temporary data directory: %w", err)
	}
	return tmp, func() {
		if keep {
			fmt.Fprintf(stdout, "data kept in %s\n", tmp)
			return
		}
		os.RemoveAll(tmp)
	}, nil
}

// demoPrinter prints one readable line per event, stamped with simulated
// time since the start.
func demoPrinter(w io.Writer, start time.Time) func(daemon.Event) {
	return func(ev daemon.Event) {
		el := ev.At.Sub(start).Round(time.Second)
		stamp := fmt.Sprintf("%02d:%02d:%02d", int(el.Hours()), int(el.Minutes())%60, int(el.Seconds())%60)
		who := ev.Gauge
		if ev.Alarm != "" {
			who = ev.Alarm + " [" + ev.Severity + "]"
		}
		fmt.Fprintf(w, "+%s  %-13s  %s: %s\n", stamp, ev.Kind, who, ev.Message)
	}
}

func demoSummary(w io.Writer, d *daemon.Daemon, dir string, simulated time.Duration) error {
	counts, err := daemon.CountSamples(dir, d.GaugeNames())
	if err != nil {
		return fmt.Errorf("summary: %w", err)
	}
	fmt.Fprintf(w, "\nsummary after %s simulated:\n", simulated.Round(time.Second))
	total := 0
	for _, g := range d.GaugeNames() {
		fmt.Fprintf(w, "  %-16s %7d samples stored\n", g, counts[g])
		total += counts[g]
	}
	fmt.Fprintf(w, "  %-16s %7d samples\n", "all gauges", total)
	raised := 0
	alarms := d.Alarms()
	slices.SortFunc(alarms, func(a, b alerts.AlarmStatus) int { return b.Raised - a.Raised })
	for _, a := range alarms {
		if a.Raised > 0 {
			state := "cleared"
			if a.Active {
				state = "still active"
			}
			fmt.Fprintf(w, "  alarm %s [%s] raised %d time(s), %s\n", a.Alarm, a.Severity, a.Raised, state)
			raised += a.Raised
		}
	}
	if raised == 0 {
		fmt.Fprintln(w, "  no alarms raised")
	}
	return nil
}

// demoToken writes a fresh random bearer token into the demo's data
// directory, so the API's changes (ack an alarm, start a hold test) can be
// tried with --token-file.
func demoToken(dir string) (string, error) {
	path := filepath.Join(dir, "token")
	if err := writeToken(path, true); err != nil {
		return "", fmt.Errorf("demo token: %w", err)
	}
	return path, nil
}
