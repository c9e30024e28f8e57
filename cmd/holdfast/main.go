// Command holdfast watches vacuum chambers: it polls gauges, applies their
// calibrations, stores every sample, serves metrics and raises alarms.
//
// Run "holdfast help" for the list of commands.
package main

import (
	"context"
	"errors"
	"flag"
	"fmt"
	"io"
	"os"
	"os/signal"
	"slices"
	"strings"
	"syscall"
)

func main() {
	ctx, stop := signal.NotifyContext(context.Background(), os.Interrupt, syscall.SIGTERM)
	err := run(ctx, os.Args[1:], os.Stdout, os.Stderr)
	stop()
	if errors.Is(err, flag.ErrHelp) {
		return
	}
	if err != nil {
		var ex exitError
		if errors.As(err, &ex) {
			os.Exit(int(ex))
		}
		fmt.Fprintf(os.Stderr, "holdfast: %v\n", err)
		os.Exit(1)
	}
}

// exitError asks main to exit with this code without printing anything more:
// the command has already told the user what went wrong.
type exitError int

func (e exitError) Error() string { return fmt.Sprintf("exit status %d", int(e)) }

// A command is one subcommand. args excludes the command's own name.
type command struct {
	summary string
	run     func(ctx context.Context, args []string, stdout, stderr io.Writer) error
}

// commands is the complete list of subcommands.
var commands = map[string]command{
	"demo":        {"run the daemon on the built-in simulated chamber", cmdDemo},
	"run":         {"run the daemon with a config file", cmdRun},
	"check":       {"check a config file and report every problem", cmdCheck},
	"reload":      {"make the running daemon read its config again and apply it", cmdReload},
	"convert":     {"convert a quantity between units", cmdConvert},
	"version":     {"print the version", cmdVersion},
	"leak":        {"analyse a recorded pressure rise: leak rate, outgassing", cmdLeak},
	"alarms":      {"list the running daemon's alarms; ack, shelve, unshelve them", cmdAlarms},
	"bake":        {"list, show and start bakes (a bake plan's phases and summaries) on the running daemon", cmdBake},
	"holdtest":    {"start, list and show hold tests (pressure-rise tests) on the running daemon", cmdHoldTest},
	"column":      {"pressure of a liquid column (p = rho*g*h)", cmdColumn},
	"calib":       {"fit, evaluate and manage gauge calibrations", cmdCalib},
	"reprocess":   {"recompute stored values from raw with another calibration", cmdReprocess},
	"ports":       {"list serial ports", cmdPorts},
	"probe":       {"run one gauge's exchange and show the bytes", cmdProbe},
	"simulate":    {"serve the simulated chamber's instruments on a pseudo-terminal", cmdSimulate},
	"query":       {"show stored samples of gauges, reduced for reading or plotting", cmdQuery},
	"export":      {"write stored samples as CSV, JSON lines or OpenMetrics", cmdExport},
	"import":      {"load history from a CSV file into a data directory", cmdImport},
	"db":          {"store file: stats, compact, backup", cmdDB},
	"report":      {"draw the report of a night: pressures, temperatures, alarms, hold tests", cmdReport},
	"temperature": {"convert a thermocouple EMF or an RTD resistance to °C, or back", cmdTemperature},
	"token":       {"make the bearer token file that guards the daemon's changes", cmdToken},
}

func run(ctx context.Context, args []string, stdout, stderr io.Writer) error {
	if len(args) == 0 {
		usage(stderr)
		return exitError(2)
	}
	if args[0] == "help" || args[0] == "-h" || args[0] == "--help" {
		usage(stdout)
		return nil
	}
	c, ok := commands[args[0]]
	if !ok {
		usage(stderr)
		return fmt.Errorf("unknown command %q", args[0])
	}
	return c.run(ctx, args[1:], stdout, stderr)
}

func usage(w io.Writer) {
	fmt.Fprintln(w, "usage: holdfast <command> [flags]\n\ncommands:")
	names := make([]string, 0, len(commands))
	for n := range commands {
		names = append(names, n)
	}
	slices.Sort(names)
	for _, n := range names {
		fmt.Fprintf(w, "  %-12s %s\n", n, commands[n].summary)
	}
	fmt.Fprintln(w, "\nRun 'holdfast <command> --help' for a command's flags.")
}

// newFlags returns a flag set for a subcommand that prints its usage to stderr
// and returns errors instead of exiting.
func newFlags(name, synopsis string, stderr io.Writer) *flag.FlagSet {
	fs := flag.NewFlagSet("holdfast "+name, flag.ContinueOnError)
	fs.SetOutput(stderr)
	fs.Usage = func() {
		fmt.Fprintf(stderr, "usage: holdfast %s %s\n", name, synopsis)
		if strings.Contains(synopsis, "[flags]") || hasFlags(fs) {
			fmt.Fprintln(stderr, "\nflags:")
			fs.PrintDefaults()
		}
	}
	return fs
}

func hasFlags(fs *flag.FlagSet) bool {
	n := 0
	fs.VisitAll(func(*flag.Flag) { n++ })
	return n > 0
}

// errUsage reports a command-line mistake; the flag set's usage has been printed.
func errUsage(format string, a ...any) error {
	return fmt.Errorf("usage: "+format, a...)
}

// firstArg takes a leading non-flag argument (a subcommand, or a file as in
// "db backup FILE --data D"), so it may come before or after the flags.
func firstArg(args []string) (string, []string) {
	if len(args) > 0 && len(args[0]) > 0 && args[0][0] != '-' {
		return args[0], args[1:]
	}
	return "", args
}
