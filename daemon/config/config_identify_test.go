package config

import (
	"strings"
	"testing"
)

// links.NAME.identify is checked where it is written: a bad pattern, a
// missing send and an identify on a Modbus link are problems naming their
// line and field; a serial path a replug can renumber is a warning (the
// config still loads) saying why and how to fix it, and stable names are not.
func TestIdentifyConfigChecked(t *testing.T) {
	bad := `chamber: {name: c, volume: 10 L}
links:
  a:
    serial: {device: /dev/serial/by-id/usb-bench-if00}
    identify: {expect: '^CH3 (lock$'}
  b:
    modbus_rtu: {device: /dev/holdfast/bench-rs485}
    identify: {send: "INFO 3\r", expect: '^CH3$'}
gauges:
  p1: {link: a, driver: ascii, exchange: [{send: "READ 3\r", expect: '^CH3 (?P<value>\S+)'}], kind: pressure}
store: {dir: /tmp/holdfast-never-opened}
`
	_, err := ParseConfig("bad.yaml", []byte(bad))
	if err == nil {
		t.Fatal("ParseConfig succeeded; want the identify problems")
	}
	msg := err.Error()
	for _, want := range []string{
		"bad.yaml:5: links.a.identify.send: missing",
		"bad.yaml:5: links.a.identify.expect: error parsing regexp",
		"bad.yaml:8: links.b.identify: only serial and tcp links",
	} {
		if !strings.Contains(msg, want) {
			t.Errorf("problems lack %q; got:\n%s", want, msg)
		}
	}

	good := `chamber: {name: c, volume: 10 L}
links:
  usb: {serial: {device: /dev/ttyUSB0}}
  named:
    serial: {device: /dev/holdfast/bench}
    identify: {send: "INFO 3\r", expect: '^CH3 lock-pirani pirani \S+$', until: "\n", timeout: 200ms}
  byid: {modbus_rtu: {device: /dev/serial/by-id/usb-bench-if00-port0}}
gauges:
  p1: {link: usb, driver: ascii, exchange: [{send: "READ 3\r", expect: '^CH3 (?P<value>\S+)'}], kind: pressure}
  p2: {link: named, driver: ascii, exchange: [{send: "READ 3\r", expect: '^CH3 (?P<value>\S+)'}], kind: pressure}
store: {dir: /tmp/holdfast-never-opened}
`
	cfg, err := ParseConfig("good.yaml", []byte(good))
	if err != nil {
		t.Fatal(err)
	}
	notes := strings.Join(cfg.Notes, "\n")
	if len(cfg.Notes) != 1 || !strings.HasPrefix(notes, "3: warning: links.usb.serial.device: \"/dev/ttyUSB0\" is not a stable name") ||
		!strings.Contains(notes, "changes after a replug") || !strings.Contains(notes, "/dev/serial/by-id/") ||
		!strings.Contains(notes, "60-holdfast-serial.rules") || !strings.Contains(notes, "identify: step") {
		t.Errorf("notes:\n%s\nwant one warning, on line 3, for /dev/ttyUSB0 only, saying why and how to fix it", notes)
	}
	if id := cfg.Links["named"].Identify.Driver(); id.Send != "INFO 3\r" || id.Until != "\n" || id.Timeout.Milliseconds() != 200 {
		t.Errorf("named's identify = %+v", id)
	}
}
