package daemon

import (
	"testing"

	"holdfast/daemon/config"
	"holdfast/daemon/config/configtest"
)

// writeSecret writes a secret file of mode 0600 in dir and returns its path.
func writeSecret(t *testing.T, dir, name, secret string) string {
	t.Helper()
	return configtest.WriteSecret(t, dir, name, secret)
}

// parseNotify parses configtest.NotifyBase with notifyYAML appended, DIR
// replaced by dir.
func parseNotify(t *testing.T, dir, notifyYAML string) (*config.Config, error) {
	t.Helper()
	return config.ParseConfig("notify.yaml", configtest.NotifyText(dir, notifyYAML))
}

// A rise watch with a while: switch is built to read the switch too.
func TestRiseWatchFollowsSwitch(t *testing.T) {
	cfg, err := config.ParseConfig("iso.yaml", []byte(`chamber: {name: valve-bench, volume: 30 L}
store: {dir: /tmp/unused}
links:
  bench: {simulator: {rough_pump: {speed: 5 m3/h, ultimate: 1 Pa}, high_pump: {speed: 60 L/s, ultimate: 1e-7 Pa}, crossover: 10 Pa}}
  plc: {modbus_tcp: {address: "127.0.0.1:1502"}}
gauges:
  ion: {link: bench, driver: sim, instrument: ion, kind: pressure}
  valve-closed: {link: plc, driver: modbus, kind: state, modbus: {table: discrete, address: 3}}
alarms:
  - name: leak-test
    gauge: ion
    hold_test:
      allowed_leak: 1e-6 mbar*L/s
      confirm: valve-closed
      valve: {link: plc, coil: 12, closed_is: "on"}
      schedule: {every: 24h, at: "03:00"}
  - name: leak-watch
    gauge: ion
    rise_watch: {max_leak: 1e-5 mbar*L/s, while: {gauge: valve-closed}}
`))
	if err != nil {
		t.Fatal(err)
	}
	d := newTestDaemon(cfg)
	rw := d.limits()[1].Rule
	if g := rw.Gauges(); len(g) != 2 || g[1] != "valve-closed" {
		t.Errorf("rise watch reads %v, want ion and the valve-closed switch", g)
	}
}
