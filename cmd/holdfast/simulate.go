package main

import (
	"context"
	"errors"
	"fmt"
	"io"
	"maps"
	"slices"
	"strconv"
	"strings"
	"text/tabwriter"
	"time"

	"holdfast/calib"
	"holdfast/daemon"
	"holdfast/daemon/config"
	"holdfast/drivers/sim"
)

// simulateArgs are the parsed flags of holdfast simulate.
type simulateArgs struct {
	file, pty, link, protocol string
	speed                     float64
	unit                      int
	opts                      sim.ServeOptions
}

func cmdSimulate(ctx context.Context, args []string, stdout, stderr io.Writer) error {
	a, err := parseSimulate(args, stderr)
	if err != nil {
		return err
	}
	cfg, err := config.LoadConfig(a.file)
	if err != nil {
		return configFailed(stderr, err)
	}
	link, err := simulatorLink(cfg, a.link)
	if err != nil {
		return err
	}
	clock := sim.NewClock(time.Now(), a.speed)
	_, byName, err := daemon.SimChamber(cfg, link, clock.Now)
	if err != nil {
		return err
	}
	ins := make([]*sim.Instrument, 0, len(byName))
	for _, name := range slices.Sorted(maps.Keys(byName)) {
		ins = append(ins, byName[name])
	}
	srv, err := sim.NewServer(ins, a.opts)
	if err != nil {
		return fmt.Errorf("link %s: %w", link, err)
	}
	p, err := sim.OpenPTY()
	if err != nil {
		return err
	}
	defer p.Close()
	unlink, err := linkPort(a.pty, p.Name(), stdout)
	if err != nil {
		return err
	}
	fmt.Fprintf(stdout, "holdfast simulate: link %s of %s at speed %g (simulated seconds per wall second)\n", link, cfg.File, a.speed)
	printServed(stdout, srv, a, p.Name())
	fmt.Fprintln(stdout, "Ctrl-C stops")
	err = serveUntilDone(ctx, srv, p, a)
	if err := errors.Join(err, unlink()); err != nil {
		return err
	}
	fmt.Fprintf(stdout, "stopped; %s removed\n", a.pty)
	return nil
}

func parseSimulate(args []string, stderr io.Writer) (simulateArgs, error) {
	var a simulateArgs
	fs := newFlags("simulate", "--config FILE --pty PATH [flags]", stderr)
	fs.StringVar(&a.file, "config", "", "config `file` with the simulator link and its driver: sim gauges")
	fs.StringVar(&a.pty, "pty", "", "`path` of the symlink to the pseudo-terminal, e.g. /tmp/holdfast-sim")
	fs.StringVar(&a.link, "link", "", "the simulator link to serve (default: the config's only one)")
	fs.StringVar(&a.protocol, "protocol", "ascii", "ascii (holdfast's own line protocol: READ 1, READ ALL, INFO 1, CHANNELS) or modbus (Modbus RTU)")
	fs.Float64Var(&a.speed, "speed", 1, "simulated seconds per wall second")
	fs.IntVar(&a.unit, "unit", 1, "Modbus unit `id` to answer for, 1 to 247")
	fs.StringVar(&a.opts.Address, "address", "", "ascii: answer only requests that begin \"TO ADDR \", as a device on an RS-485 bus")
	fs.BoolVar(&a.opts.Checksum, "checksum", false, "ascii: requests and replies end in \" ~HH\", the exclusive-or of the bytes before the digits")
	unit := fs.String("pressure-unit", "mbar", "the unit pressures are printed and served in")
	if err := fs.Parse(args); err != nil {
		return a, err
	}
	var problems []string
	if fs.NArg() > 0 {
		problems = append(problems, fmt.Sprintf("simulate takes no arguments, got %q", fs.Args()))
	}
	if a.file == "" || a.pty == "" {
		problems = append(problems, "simulate needs --config FILE and --pty PATH")
	}
	if a.protocol != "ascii" && a.protocol != "modbus" {
		problems = append(problems, fmt.Sprintf("--protocol must be ascii or modbus, got %q", a.protocol))
	}
	if !(a.speed > 0) || a.speed > 1e5 {
		problems = append(problems, fmt.Sprintf("--speed must be above 0 and at most 100000, got %g", a.speed))
	}
	if a.unit < 1 || a.unit > 247 {
		problems = append(problems, fmt.Sprintf("--unit must be 1 to 247 (a serial-line Modbus unit id), got %d", a.unit))
	}
	if a.protocol == "modbus" && (a.opts.Address != "" || a.opts.Checksum) {
		problems = append(problems, "--address and --checksum belong to the ascii protocol; Modbus uses --unit and its own CRC")
	}
	u, err := calib.ParseUnit(*unit, calib.Pressure)
	if err != nil {
		problems = append(problems, "--pressure-unit: "+err.Error())
	}
	a.opts.Unit = u
	if len(problems) > 0 {
		fs.Usage()
		return a, errUsage("%s", strings.Join(problems, "; "))
	}
	return a, nil
}

// simulatorLink picks the simulator link to serve: the one named, or the
// config's only one.
func simulatorLink(cfg *config.Config, name string) (string, error) {
	var links []string
	for n, l := range cfg.Links {
		if l != nil && l.Simulator != nil {
			links = append(links, n)
		}
	}
	slices.Sort(links)
	switch {
	case name != "" && slices.Contains(links, name):
		return name, nil
	case name != "":
		return "", fmt.Errorf("%s: no simulator link %q (simulator links: %s)", cfg.File, name, listOrNone(links))
	case len(links) == 1:
		return links[0], nil
	case len(links) == 0:
		return "", fmt.Errorf("%s has no simulator link; serve a config such as deploy/examples/pty-sim.yaml", cfg.File)
	}
	return "", fmt.Errorf("%s has %d simulator links (%s); choose one with --link", cfg.File, len(links), strings.Join(links, ", "))
}

func listOrNone(s []string) string {
	if len(s) == 0 {
		return "none"
	}
	return strings.Join(s, ", ")
}

// serveUntilDone serves until ctx is done, then closes the pty so the
// server returns, and waits for it.
func serveUntilDone(ctx context.Context, srv *sim.Server, p *sim.PTY, a simulateArgs) error {
	done := make(chan error, 1)
	go func() {
		if a.protocol == "modbus" {
			done <- srv.ServeRTU(p.Master, uint8(a.unit))
			return
		}
		done <- srv.ServeASCII(p.Master)
	}()
	select {
	case err := <-done: // the pty failed under us
		return fmt.Errorf("serving %s: %w", p.Name(), err)
	case <-ctx.Done():
	}
	p.Close()
	<-done // returns with the read error of the closed pty
	return nil
}

// printServed says what is served where and shows a real exchange.
func printServed(w io.Writer, srv *sim.Server, a simulateArgs, slave string) {
	proto := "ascii"
	if a.protocol == "modbus" {
		proto = fmt.Sprintf("Modbus RTU, unit %d", a.unit)
	}
	fmt.Fprintf(w, "serving %s on %s (-> %s)\n", proto, a.pty, slave)
	fmt.Fprintln(w, "a pseudo-terminal ignores baud, parity and stop bits: any settings work")
	tw := tabwriter.NewWriter(w, 2, 8, 2, ' ', 0)
	if a.protocol == "modbus" {
		fmt.Fprintln(tw, "  channel\tgauge\tinstrument\tvalue (float32, high word first)\tstatus (uint16 flags)")
		for _, c := range srv.Channels() {
			fmt.Fprintf(tw, "  %d\t%s\t%s\tinput %d-%d, %s\tinput %d\n", c.Number, c.Name, c.Kind,
				2*(c.Number-1), 2*(c.Number-1)+1, c.Unit, sim.StatusBase+c.Number-1)
		}
		tw.Flush()
		fmt.Fprintln(w, "status flags, one set at a time: 1 ok, 2 under-range, 4 over-range, 8 sensor-fault, 16 off")
		return
	}
	fmt.Fprintln(tw, "  channel\tgauge\tinstrument\tunit")
	for _, c := range srv.Channels() {
		fmt.Fprintf(tw, "  %d\t%s\t%s\t%s\n", c.Number, c.Name, c.Kind, c.Unit)
	}
	tw.Flush()
	fmt.Fprintln(w, "readings are CH<n> <value> <unit> <state>; states GOOD ok, BELOW under-range, ABOVE over-range, FAULT sensor-fault, IDLE off")
	for _, cmd := range []string{"READ 1", "READ ALL"} {
		req := srv.Request(cmd)
		reply := srv.Answer(req[:len(req)-1])
		fmt.Fprintf(w, "  now: %s -> %s\n", strconv.Quote(string(req)), quoteReply(reply))
	}
}

func quoteReply(b []byte) string {
	if b == nil {
		return "(no reply: the instrument is silent)"
	}
	return strconv.Quote(string(b))
}
