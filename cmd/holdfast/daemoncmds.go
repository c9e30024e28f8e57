package main

import (
	"context"
	"errors"
	"fmt"
	"io"
	"log"
	"log/slog"
	"os"
	"os/signal"
	"sync"
	"syscall"

	"holdfast/daemon"
	"holdfast/daemon/config"
)

func cmdRun(ctx context.Context, args []string, stdout, stderr io.Writer) error {
	fs := newFlags("run", "--config FILE [flags]\n\nRuns the daemon: polls every gauge of the config, stores every sample in\nstore.dir, serves /metrics and the API on http.listen, and raises alarms.\nCheck the config first with holdfast check. A monitoring aid, never a\nsafety interlock.", stderr)
	file := fs.String("config", "", "config `file` (YAML)")
	level := fs.String("log-level", "info", "log `level`: debug, info, warn or error")
	if err := fs.Parse(args); err != nil {
		return err
	}
	if *file == "" {
		fs.Usage()
		return errUsage("run needs --config FILE")
	}
	log, err := newLogger(stderr, *level)
	if err != nil {
		return err
	}
	cfg, err := config.LoadConfig(*file)
	if err != nil {
		return configFailed(stderr, err)
	}
	for _, w := range config.SecretWarnings(cfg) {
		log.Warn("config: "+w, "config", *file)
	}
	d, err := daemon.New(cfg, daemon.Options{Log: log})
	if err != nil {
		return err
	}
	hup := make(chan os.Signal, 1)
	signal.Notify(hup, syscall.SIGHUP)
	defer signal.Stop(hup)
	hctx, stopHup := context.WithCancel(ctx)
	var wg sync.WaitGroup
	wg.Go(func() { reloadOnHangup(hctx, d, hup) })
	err = d.Run(ctx)
	stopHup()
	wg.Wait()
	return err
}

// reloadOnHangup reloads the config on every SIGHUP until ctx is done.
func reloadOnHangup(ctx context.Context, d *daemon.Daemon, hup <-chan os.Signal) {
	for {
		select {
		case <-ctx.Done():
			return
		case <-hup:
			_, _ = d.Reload(ctx) // logged by the daemon, with every problem and its line
		}
	}
}

func cmdCheck(ctx context.Context, args []string, stdout, stderr io.Writer) error {
	fs := newFlags("check", "--config FILE [FILE...]\n\nReads each config file and prints every problem at once as\nFILE:LINE: path: what is wrong and what is expected, exiting 1; a valid\nfile gets a one-line summary. Secret files that cannot be read here are\nnoted, not refused (the daemon's machine must have them); a missing, empty\nor short http.token_file is refused, as the daemon would refuse it.", stderr)
	file := fs.String("config", "", "config `file` to check; more files may follow as arguments")
	if err := fs.Parse(args); err != nil {
		return err
	}
	files := fs.Args()
	if *file != "" {
		files = append([]string{*file}, files...)
	}
	if len(files) == 0 {
		fs.Usage()
		return errUsage("check needs --config FILE")
	}
	bad := 0
	for _, f := range files {
		cfg, err := config.CheckConfig(f)
		if err != nil {
			bad++
			fmt.Fprintln(stderr, describeConfigError(err))
			continue
		}
		fmt.Fprintln(stdout, config.Summary(cfg))
		for _, n := range cfg.Notes {
			fmt.Fprintf(stdout, "%s:%s\n", f, n)
		}
	}
	if bad > 0 {
		return exitError(1)
	}
	return nil
}

func configFailed(stderr io.Writer, err error) error {
	var ce *config.ConfigError
	if errors.As(err, &ce) {
		fmt.Fprintln(stderr, ce.Error())
		return fmt.Errorf("%s: %d problem(s); fix them and run again (holdfast check --config %s)", ce.File, len(ce.Problems), ce.File)
	}
	return err
}

func describeConfigError(err error) string {
	var ce *config.ConfigError
	if errors.As(err, &ce) {
		return ce.Error()
	}
	return "holdfast: " + err.Error()
}

func newLogger(w io.Writer, level string) (*slog.Logger, error) {
	var l slog.Level
	if err := l.UnmarshalText([]byte(level)); err != nil {
		return nil, fmt.Errorf("--log-level: want debug, info, warn or error, got %q", level)
	}
	h := slog.NewTextHandler(w, &slog.HandlerOptions{Level: l})
	// A library that logs through the standard log package (the Modbus
	// RTU transport does) goes through the same handler, as a warning.
	log.SetFlags(0)
	log.SetOutput(slog.NewLogLogger(h, slog.LevelWarn).Writer())
	return slog.New(h), nil
}

func cmdVersion(ctx context.Context, args []string, stdout, stderr io.Writer) error {
	fs := newFlags("version", "", stderr)
	if err := fs.Parse(args); err != nil {
		return err
	}
	fmt.Fprintf(stdout, "holdfast %s\n", daemon.ReadBuild())
	return nil
}
