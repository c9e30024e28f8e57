package main

import (
	"context"
	"encoding/hex"
	"fmt"
	"io"
	"strings"
	"time"

	"holdfast/calib"
	"holdfast/daemon"
	"holdfast/daemon/config"
)

func cmdProbe(ctx context.Context, args []string, stdout, stderr io.Writer) error {
	fs := newFlags("probe", "--config FILE --gauge NAME [flags]", stderr)
	file := fs.String("config", "", "config `file` (YAML)")
	name := fs.String("gauge", "", "the gauge to probe")
	count := fs.Int("count", 3, "exchanges to run")
	every := fs.Duration("every", time.Second, "pause between exchanges")
	fs.Usage = probeUsage(fs, stderr)
	if err := fs.Parse(args); err != nil {
		return err
	}
	if *file == "" || *name == "" {
		fs.Usage()
		return errUsage("probe needs --config FILE and --gauge NAME")
	}
	if *count < 1 {
		return errUsage("--count must be at least 1, got %d", *count)
	}
	cfg, err := config.LoadConfig(*file)
	if err != nil {
		return configFailed(stderr, err)
	}
	p, err := daemon.OpenProbe(cfg, *name, nil, func(dir string, b []byte) { printBytes(stdout, dir, b) })
	if err != nil {
		return err
	}
	defer p.Close()
	failed := 0
	for i := range *count {
		if i > 0 {
			select {
			case <-ctx.Done():
				return nil
			case <-time.After(*every):
			}
		}
		fmt.Fprintf(stdout, "exchange %d:\n", i+1)
		res := p.Read(ctx)
		if res.Err != nil {
			failed++
		}
		printResult(stdout, res)
	}
	if failed > 0 {
		return fmt.Errorf("probe: %d of %d exchanges failed", failed, *count)
	}
	return nil
}

func probeUsage(fs interface{ PrintDefaults() }, w io.Writer) func() {
	return func() {
		fmt.Fprint(w, `usage: holdfast probe --config FILE --gauge NAME [flags]

Runs one gauge's exchange, as configured, and prints the bytes sent and
received (hex and printable), the parsed value and status, the value after
the gauge's transfer, and the round-trip time. Use it while wiring up an
instrument; it opens only that gauge's link, so stop a daemon that holds the
same port first.

flags:
`)
		fs.PrintDefaults()
	}
}

// printBytes shows one message in hex and as printable text with escapes.
func printBytes(w io.Writer, dir string, b []byte) {
	arrow := map[string]string{"send": "  -> ", "recv": "  <- "}[dir]
	if arrow == "" {
		arrow = "  " + dir + " "
	}
	fmt.Fprintf(w, "%s%-40s  \"%s\"\n", arrow, hex.EncodeToString(b), printable(b))
}

func printable(b []byte) string {
	var sb strings.Builder
	for _, c := range b {
		switch {
		case c == '\r':
			sb.WriteString(`\r`)
		case c == '\n':
			sb.WriteString(`\n`)
		case c == '"' || c == '\\':
			sb.WriteByte('\\')
			sb.WriteByte(c)
		case c >= 0x20 && c < 0x7f:
			sb.WriteByte(c)
		default:
			fmt.Fprintf(&sb, `\x%02x`, c)
		}
	}
	return sb.String()
}

func printResult(w io.Writer, res daemon.ProbeResult) {
	ms := float64(res.Took.Microseconds()) / 1000
	if res.Err != nil {
		fmt.Fprintf(w, "  failed after %.1f ms: %v\n", ms, res.Err)
		return
	}
	val := res.Sample.Quality.String()
	if res.Sample.Quality == calib.QualityOK {
		val = calib.Format(res.Sample.Value, res.Unit)
		if res.Kind == "state" { // a digital input has no unit: name the state
			val = stateWord(res.Sample.Value)
		}
	}
	fmt.Fprintf(w, "  raw %g, status %s -> %s   (%.1f ms)\n", res.Reading.Raw, res.Reading.Status, val, ms)
}

// stateWord names a digital input's value the way configs do (on, off).
func stateWord(v float64) string {
	switch v {
	case 1:
		return "on (1)"
	case 0:
		return "off (0)"
	}
	return fmt.Sprintf("%g (neither on nor off)", v)
}
