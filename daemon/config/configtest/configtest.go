// Package configtest holds the config fragments and secret files that the
// tests of daemon/config and of the daemon share. It does not import
// daemon/config, so that package's own tests can use it.
package configtest

import (
	"os"
	"path/filepath"
	"strings"
	"testing"
)

// NotifyBase is a working config with no notifiers; tests append some.
// Its store dir is DIR.
const NotifyBase = `
chamber: {name: bakeout-3, volume: 30 L}
http: {listen: "127.0.0.1:0"}
store: {dir: DIR}
links:
  bench:
    simulator:
      rough_pump: {speed: 5 m3/h, ultimate: 1 Pa}
      seed: 1
gauges:
  pirani: {link: bench, driver: sim, instrument: pirani, kind: pressure, unit: mbar, interval: 1s}
`

// NotifyText is NotifyBase with notifyYAML appended and every DIR, in
// both, replaced by dir.
func NotifyText(dir, notifyYAML string) []byte {
	return []byte(strings.ReplaceAll(NotifyBase+notifyYAML, "DIR", dir))
}

// WriteSecret writes secret and a newline to a file of mode 0600 in dir
// and returns its path.
func WriteSecret(t testing.TB, dir, name, secret string) string {
	t.Helper()
	p := filepath.Join(dir, name)
	if err := os.WriteFile(p, []byte(secret+"\n"), 0o600); err != nil {
		t.Fatal(err)
	}
	return p
}
