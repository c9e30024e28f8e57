package daemon

import (
	"net/http"
	"os"
	"path/filepath"
	"strings"
	"testing"
	"time"

	"holdfast/daemon/config"
)

const shelveConfig = `
chamber: {name: shelf-bench, volume: 30 L}
http: {listen: "127.0.0.1:0", token_file: TOKEN}
store: {dir: DIR}
shelving: {default: 2h, max: 4h}
links:
  bench: {simulator: {seed: 2, rough_pump: {speed: 5 m3/h, ultimate: 1 Pa}}}
gauges:
  pirani: {link: bench, driver: sim, instrument: pirani, kind: pressure}
alarms:
  - {name: rough-lost, gauge: pirani, above: 1 Pa, severity: high}
  - {name: vented, gauge: pirani, above: 50 kPa, severity: critical}
`

// startShelveDaemon runs a daemon on shelveConfig with token as its bearer
// token until the test ends, and waits for its alarm state to load.
func startShelveDaemon(t *testing.T, token string) *Daemon {
	t.Helper()
	dir := t.TempDir()
	tok := filepath.Join(dir, "token")
	if err := os.WriteFile(tok, []byte(token+"\n"), 0o600); err != nil {
		t.Fatal(err)
	}
	cfg, err := config.ParseConfig("shelf.yaml", []byte(strings.NewReplacer("DIR", dir, "TOKEN", tok).Replace(shelveConfig)))
	if err != nil {
		t.Fatal(err)
	}
	d, err := New(cfg, Options{})
	if err != nil {
		t.Fatal(err)
	}
	t.Cleanup(runInBackground(t, d))
	select {
	case <-d.alarmsReady:
	case <-time.After(10 * time.Second):
		t.Fatal("alarm state not loaded")
	}
	return d
}

// "alarms shelve NAME --reason x" without --for shelved a critical alarm
// forever, across restarts. Through the API a shelf now ends at
// shelving.default, never passes shelving.max, and a critical alarm needs
// its end given.
func TestShelveThroughTheAPIAlwaysEnds(t *testing.T) {
	const token = "shelf-token-0123456789"
	d := startShelveDaemon(t, token)
	call := func(alarm string, body AlarmActionJSON) (int, AlarmJSON) {
		var out AlarmJSON
		var code int
		for end := time.Now().Add(5 * time.Second); ; time.Sleep(20 * time.Millisecond) { // until the alarm state is loaded
			code = apiCall(t, d, "POST", "/api/v1/alarms/"+alarm+"/shelve", token, body, &out)
			if code != http.StatusConflict || time.Now().After(end) {
				return code, out
			}
		}
	}
	before := time.Now()
	code, a := call("rough-lost", AlarmActionJSON{Reason: "pump swap"})
	if code != http.StatusOK || a.Until.Before(before.Add(2*time.Hour)) || a.Until.After(time.Now().Add(2*time.Hour)) {
		t.Errorf("shelve without for: %d, until %s; want 200 and an end 2 h on (shelving.default)", code, a.Until)
	}
	if code, _ := call("vented", AlarmActionJSON{Reason: "x"}); code != http.StatusBadRequest {
		t.Errorf("shelve a critical alarm without for: %d, want 400", code)
	}
	if code, _ := call("vented", AlarmActionJSON{Reason: "x", For: "5h"}); code != http.StatusBadRequest {
		t.Errorf("shelve for 5 h with shelving.max 4h: %d, want 400", code)
	}
	if code, a := call("vented", AlarmActionJSON{Reason: "x", For: "1h"}); code != http.StatusOK || a.Until.IsZero() {
		t.Errorf("shelve a critical alarm for 1 h: %d, until %s; want 200", code, a.Until)
	}
}

func TestShelvingConfigChecked(t *testing.T) {
	text := strings.NewReplacer("DIR", t.TempDir(), "token_file: TOKEN", "", "{default: 2h, max: 4h}", "{default: 8h, max: 1h}").Replace(shelveConfig)
	_, err := config.ParseConfig("shelf.yaml", []byte(text))
	if err == nil || !strings.Contains(err.Error(), "shelf.yaml:5: shelving.max: must be at least shelving.default (8h), got 1h") {
		t.Errorf("max below default: %v", err)
	}
}
