package main

import (
	"context"
	"encoding/json"
	"errors"
	"fmt"
	"io"
	"io/fs"
	"os"
	"path/filepath"
	"slices"
	"strings"
	"text/tabwriter"

	"go.bug.st/serial/enumerator"
)

const portsSynopsis = `[--json] [--all | --by-id-only]

Lists serial ports: the device, its USB vendor:product id and serial number
when it is a USB adapter, and its stable name under /dev/serial/by-id, which
survives replugging and is the name to put in a link's config.

By default it reads USB adapters from sysfs and opens nothing, so it is
safe while holdfast runs. --all also lists built-in ttyS* ports.
Caution: --all opens every built-in port to see whether it exists, which
resets a port in use to 9600 baud raw mode. Do not use --all while holdfast
or another program is talking over a built-in port. --by-id-only lists the
stable names alone.`

// byIDDir is where udev puts the stable names of USB serial ports.
const byIDDir = "/dev/serial/by-id"

// A portInfo is one line of holdfast ports.
type portInfo struct {
	Device string   `json:"device"`
	USBID  string   `json:"usb_id,omitempty"` // vendor:product, lower-case hex
	Serial string   `json:"serial_number,omitempty"`
	ByID   []string `json:"by_id,omitempty"`
}

func cmdPorts(ctx context.Context, args []string, stdout, stderr io.Writer) error {
	flags := newFlags("ports", portsSynopsis, stderr)
	asJSON := flags.Bool("json", false, "print the list as JSON")
	byIDOnly := flags.Bool("by-id-only", false, "list only the stable /dev/serial/by-id names; opens no port")
	all := flags.Bool("all", false, "also list built-in ttyS* ports (opens each of them: see the caution above)")
	if err := flags.Parse(args); err != nil {
		return err
	}
	if flags.NArg() > 0 {
		flags.Usage()
		return errUsage("ports takes no arguments, got %q", flags.Args())
	}
	if *all && *byIDOnly {
		return errUsage("give --all or --by-id-only, not both")
	}
	enumerate := func(...func(vid, pid string) bool) ([]*enumerator.PortDetails, error) {
		return sysfsUSBPorts("/sys/class/tty")
	}
	switch {
	case *all:
		enumerate = enumerator.GetDetailedPortsList
	case *byIDOnly:
		enumerate = nil
	}
	ports, err := listPorts(enumerate, byIDDir)
	if err != nil {
		return fmt.Errorf("ports: %w", err)
	}
	if *asJSON {
		enc := json.NewEncoder(stdout)
		enc.SetIndent("", "  ")
		return enc.Encode(ports)
	}
	return printPorts(stdout, ports)
}

// listPorts merges the enumerated ports (nil enumerate: none) with the
// stable names found in dir, sorted by device.
func listPorts(enumerate func(...func(vid, pid string) bool) ([]*enumerator.PortDetails, error), dir string) ([]portInfo, error) {
	byDevice := map[string]*portInfo{}
	if enumerate != nil {
		details, err := enumerate()
		if err != nil {
			return nil, fmt.Errorf("list serial ports: %w", err)
		}
		for _, d := range details {
			p := &portInfo{Device: d.Name}
			if d.IsUSB {
				p.USBID = strings.ToLower(d.VID + ":" + d.PID) // v1.8 upper-cases, older versions did not
				p.Serial = d.SerialNumber
			}
			byDevice[d.Name] = p
		}
	}
	links, err := stableNames(dir)
	if err != nil {
		return nil, err
	}
	for link, target := range links {
		p, ok := byDevice[target]
		if !ok {
			p = &portInfo{Device: target}
			byDevice[target] = p
		}
		p.ByID = append(p.ByID, link)
	}
	out := make([]portInfo, 0, len(byDevice))
	for _, p := range byDevice {
		slices.Sort(p.ByID)
		out = append(out, *p)
	}
	slices.SortFunc(out, func(a, b portInfo) int { return strings.Compare(a.Device, b.Device) })
	return out, nil
}

// stableNames maps each symlink in dir to the device it points at. A
// missing dir (no USB serial adapter plugged in) is no error.
func stableNames(dir string) (map[string]string, error) {
	entries, err := os.ReadDir(dir)
	if errors.Is(err, fs.ErrNotExist) {
		return nil, nil
	}
	if err != nil {
		return nil, fmt.Errorf("read %s: %w", dir, err)
	}
	links := map[string]string{}
	for _, e := range entries {
		link := filepath.Join(dir, e.Name())
		target, err := filepath.EvalSymlinks(link)
		if err != nil {
			continue // a link whose device just went away
		}
		links[link] = target
	}
	return links, nil
}

func printPorts(w io.Writer, ports []portInfo) error {
	if len(ports) == 0 {
		_, err := fmt.Fprintln(w, "no serial ports found")
		return err
	}
	tw := tabwriter.NewWriter(w, 0, 4, 2, ' ', 0)
	fmt.Fprintln(tw, "DEVICE\tUSB ID\tSERIAL\tSTABLE NAME")
	for _, p := range ports {
		names := []string{"-"}
		if len(p.ByID) > 0 {
			names = p.ByID
		}
		fmt.Fprintf(tw, "%s\t%s\t%s\t%s\n", p.Device, orDash(p.USBID), orDash(p.Serial), names[0])
		for _, n := range names[1:] {
			fmt.Fprintf(tw, "\t\t\t%s\n", n)
		}
	}
	return tw.Flush()
}

func orDash(s string) string {
	if s == "" {
		return "-"
	}
	return s
}
