package main

import (
	"os"
	"path/filepath"
	"slices"
	"strings"

	"go.bug.st/serial/enumerator"
)

// sysfsUSBPorts lists the USB serial adapters (ttyUSB*, ttyACM*) from
// sysfs under root (normally /sys/class/tty) without opening any device,
// so it is safe while another program uses a port. Built-in ttyS* ports are
// not listed: only opening one tells whether it exists.
func sysfsUSBPorts(root string) ([]*enumerator.PortDetails, error) {
	entries, err := os.ReadDir(root)
	if err != nil {
		if os.IsNotExist(err) {
			return nil, nil // not Linux, or no sysfs: nothing to say
		}
		return nil, err
	}
	var out []*enumerator.PortDetails
	for _, e := range entries {
		name := e.Name()
		if !strings.HasPrefix(name, "ttyUSB") && !strings.HasPrefix(name, "ttyACM") {
			continue
		}
		d := &enumerator.PortDetails{Name: "/dev/" + name}
		if dev, err := filepath.EvalSymlinks(filepath.Join(root, name, "device")); err == nil {
			if usb := usbDeviceDir(dev); usb != "" {
				d.IsUSB = true
				d.VID, d.PID = readAttr(usb, "idVendor"), readAttr(usb, "idProduct")
				d.SerialNumber = readAttr(usb, "serial")
			}
		}
		out = append(out, d)
	}
	slices.SortFunc(out, func(a, b *enumerator.PortDetails) int { return strings.Compare(a.Name, b.Name) })
	return out, nil
}

// usbDeviceDir walks up from an interface's directory to the USB device
// that carries idVendor, or returns "".
func usbDeviceDir(dir string) string {
	for d := dir; d != "/" && d != "."; d = filepath.Dir(d) {
		if _, err := os.Stat(filepath.Join(d, "idVendor")); err == nil {
			return d
		}
	}
	return ""
}

func readAttr(dir, name string) string {
	b, err := os.ReadFile(filepath.Join(dir, name))
	if err != nil {
		return ""
	}
	return strings.TrimSpace(string(b))
}
