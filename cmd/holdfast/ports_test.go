package main

import (
	"bytes"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"go.bug.st/serial/enumerator"
)

func TestListPortsMergesStableNames(t *testing.T) {
	dev := t.TempDir()
	usb := filepath.Join(dev, "ttyUSB0")
	if err := os.WriteFile(usb, nil, 0o600); err != nil {
		t.Fatal(err)
	}
	byID := filepath.Join(dev, "by-id")
	os.Mkdir(byID, 0o755)
	stable := filepath.Join(byID, "usb-bench_adapter_X1-if00-port0")
	if err := os.Symlink("../ttyUSB0", stable); err != nil {
		t.Fatal(err)
	}
	os.Symlink("../gone", filepath.Join(byID, "usb-unplugged-if00")) // dangling: skipped
	enumerate := func(...func(vid, pid string) bool) ([]*enumerator.PortDetails, error) {
		return []*enumerator.PortDetails{
			{Name: usb, IsUSB: true, VID: "0ABC", PID: "12EF", SerialNumber: "X1"},
			{Name: "/dev/ttyS0"},
		}, nil
	}
	ports, err := listPorts(enumerate, byID)
	if err != nil {
		t.Fatal(err)
	}
	if len(ports) != 2 || ports[0].Device != "/dev/ttyS0" || ports[1].Device != usb {
		t.Fatalf("ports = %+v, want ttyS0 and the USB port", ports)
	}
	p := ports[1]
	if p.USBID != "0abc:12ef" || p.Serial != "X1" || len(p.ByID) != 1 || p.ByID[0] != stable {
		t.Errorf("usb port = %+v, want 0abc:12ef, X1 and its by-id name", p)
	}
	var out bytes.Buffer
	if err := printPorts(&out, ports); err != nil {
		t.Fatal(err)
	}
	if !strings.Contains(out.String(), "0abc:12ef") || !strings.Contains(out.String(), stable) {
		t.Errorf("printed:\n%s\nwant the id and stable name", out.String())
	}
}

func TestListPortsByIDOnlyOpensNothing(t *testing.T) {
	ports, err := listPorts(nil, filepath.Join(t.TempDir(), "absent"))
	if err != nil || len(ports) != 0 {
		t.Fatalf("listPorts = %v, %v; want none and no error", ports, err)
	}
}

func TestPortsHelpWarnsAboutProbing(t *testing.T) {
	var stderr bytes.Buffer
	err := cmdPorts(t.Context(), []string{"--help"}, &bytes.Buffer{}, &stderr)
	if err == nil || !strings.Contains(stderr.String(), "resets a port in use") {
		t.Errorf("help = %q (%v), want the caution about opening ttyS ports", stderr.String(), err)
	}
}

// The default listing reads USB adapters from a sysfs tree and opens
// nothing; built-in ttyS ports are left out.
func TestSysfsUSBPorts(t *testing.T) {
	root := t.TempDir()
	usb := filepath.Join(root, "devices", "usb1", "1-2")
	iface := filepath.Join(usb, "1-2:1.0", "ttyUSB0")
	for dir, files := range map[string]map[string]string{
		usb:   {"idVendor": "abcd\n", "idProduct": "1234\n", "serial": "BENCH42\n"},
		iface: {},
	} {
		if err := os.MkdirAll(dir, 0o755); err != nil {
			t.Fatal(err)
		}
		for f, v := range files {
			os.WriteFile(filepath.Join(dir, f), []byte(v), 0o644)
		}
	}
	class := filepath.Join(root, "class")
	os.MkdirAll(filepath.Join(class, "ttyUSB0"), 0o755)
	os.Symlink(iface, filepath.Join(class, "ttyUSB0", "device"))
	os.MkdirAll(filepath.Join(class, "ttyS0"), 0o755)
	ports, err := sysfsUSBPorts(class)
	if err != nil {
		t.Fatal(err)
	}
	if len(ports) != 1 || ports[0].Name != "/dev/ttyUSB0" || ports[0].VID != "abcd" || ports[0].PID != "1234" || ports[0].SerialNumber != "BENCH42" {
		t.Errorf("got %+v; want one ttyUSB0 with abcd:1234 serial BENCH42", ports)
	}
}
