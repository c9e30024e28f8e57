package config

import (
	"fmt"
	"strings"

	"holdfast/drivers"
)

// IdentifyConfig is a link's identity exchange (links.NAME.identify): a
// question and the pattern the right instrument's reply matches, run every
// time the link opens or reopens its device and before any gauge on it is
// polled. A reply that does not match, or none, keeps the link down with
// the reason, retried on the link's reconnect backoff, so a renumbered USB
// adapter or a stale link never passes another instrument's readings off as
// this one's. Serial and TCP links only; see drivers.Identify.
//
//	identify: {send: "INFO 3\r", expect: '^CH3 rough pirani mbar$'}
type IdentifyConfig struct {
	Send    string   `yaml:"send"`   // escapes as in exchange steps: \r \n \t \0 \\ \xHH
	Expect  string   `yaml:"expect"` // Go regular expression (RE2) over the reply less trailing CR/LF
	Until   string   `yaml:"until"`  // the reply's last byte; default "\n"
	Timeout Duration `yaml:"timeout"`
}

// driver is the identity exchange as drivers takes it; nil stays nil.
func (c *IdentifyConfig) Driver() *drivers.Identify {
	if c == nil {
		return nil
	}
	return &drivers.Identify{Send: c.Send, Expect: c.Expect, Until: c.Until, Timeout: c.Timeout.D()}
}

// stableSerialDirs hold names that follow the adapter rather than the order
// adapters were found: the kernel's by-id links and the names our udev rule
// (deploy/udev/60-holdfast-serial.rules) makes.
var stableSerialDirs = []string{"/dev/serial/by-id/", "/dev/holdfast/"}

// identifyLink checks links.NAME.identify and warns about a serial device
// named by a path that a replug or reboot can give to another adapter.
func (v *checker) identifyLink(path string, l *LinkConfig) {
	if l.Identify != nil {
		switch {
		case l.Serial == nil && l.TCP == nil:
			v.problem(path+".identify", "only serial and tcp links run an identity exchange; remove it here "+
				"(for a Modbus link, check the instrument with a gauge's register read instead)")
		default:
			v.driverErrs(path+".identify", l.Identify.Driver().Validate())
		}
	}
	for _, c := range []struct {
		kind string
		s    *SerialLinkConfig
	}{{"serial", l.Serial}, {"modbus_rtu", l.ModbusRTU}} {
		kind, s := c.kind, c.s
		if s == nil || s.Device == "" || stableDevice(s.Device) {
			continue
		}
		fix := ""
		if l.Identify == nil {
			fix = "; and give the link an identify: step, so that a wrong instrument keeps it down"
		}
		v.warning(path+"."+kind+".device", "%q is not a stable name: a USB serial adapter's number "+
			"(/dev/ttyUSB0, /dev/ttyACM0) follows the order adapters were found and changes after a replug or a reboot, "+
			"so this link can reach another instrument; use the adapter's /dev/serial/by-id/... name (holdfast ports lists them) "+
			"or a /dev/holdfast/ name from deploy/udev/60-holdfast-serial.rules%s", s.Device, fix)
	}
}

func stableDevice(dev string) bool {
	for _, d := range stableSerialDirs {
		if strings.HasPrefix(dev, d) {
			return true
		}
	}
	return false
}

// warning records a remark that is not a problem but deserves fixing; check
// prints it and the daemon still starts.
func (v *checker) warning(path, format string, a ...any) {
	v.cfg.Notes = append(v.cfg.Notes, fmt.Sprintf("%d: warning: %s: %s", v.line(path), path, fmt.Sprintf(format, a...)))
}
