package daemon

import (
	"holdfast/daemon/config"
	"os"
	"path/filepath"
	"strings"
	"testing"
)

// TestCheckAgreesWithRun runs holdfast check's loader (CheckConfig) and
// the daemon's start (LoadConfig then New) over the same broken configs:
// each must be refused by both, with the same fragment, so a config that
// passes check (as the systemd unit's ExecStartPre= runs it) never makes
// the daemon exit at start. Each case was seen to pass check on the code
// before config_agree.go.
func TestCheckAgreesWithRun(t *testing.T) {
	for _, c := range []struct {
		name  string
		edit  func(dir string) string // returns the config text
		token string                  // token file contents; "-" for no file
		perm  os.FileMode
		want  string
	}{
		{name: "negative flush", want: "store.flush_every", edit: func(dir string) string {
			return base(dir, "  flush_every: -1s\n", "", "")
		}},
		{name: "negative timeout", want: "gauges.p1.timeout", edit: func(dir string) string {
			return base(dir, "", "    timeout: -1s\n", "")
		}},
		{name: "missing token", token: "-", want: "http.token_file", edit: func(dir string) string {
			return base(dir, "", "", "") + "http: {listen: 127.0.0.1:0, token_file: " + filepath.Join(dir, "token") + "}\n"
		}},
		{name: "short token", token: "abc\n", want: "http.token_file", edit: func(dir string) string {
			return base(dir, "", "", "") + "http: {listen: 127.0.0.1:0, token_file: " + filepath.Join(dir, "token") + "}\n"
		}},
		{name: "empty token", token: "", want: "http.token_file", edit: func(dir string) string {
			return base(dir, "", "", "") + "http: {listen: 127.0.0.1:0, token_file: " + filepath.Join(dir, "token") + "}\n"
		}},
		{name: "world-writable token", token: "0123456789abcdef0123\n", perm: 0o666, want: "http.token_file", edit: func(dir string) string {
			return base(dir, "", "", "") + "http: {listen: 127.0.0.1:0, token_file: " + filepath.Join(dir, "token") + "}\n"
		}},
		{name: "store dir is a file", want: "store.dir", edit: func(dir string) string {
			f := filepath.Join(dir, "plain")
			if err := os.WriteFile(f, []byte("x"), 0o600); err != nil {
				panic(err)
			}
			return strings.Replace(base(dir, "", "", ""), filepath.Join(dir, "data"), f, 1)
		}},
		{name: "fault at interval", want: "alarms[0].fault", edit: func(dir string) string {
			return base(dir, "", "", "  - {name: f, gauge: p1, fault: 1s}\n")
		}},
		{name: "stale below interval", want: "alarms[0].stale", edit: func(dir string) string {
			return base(dir, "", "", "  - {name: s, gauge: p1, stale: 500ms}\n")
		}},
		{name: "negative limit", want: "alarms[0].above", edit: func(dir string) string {
			return base(dir, "", "", "  - {name: n, gauge: p1, above: -3 mbar}\n")
		}},
		{name: "underflow limit", want: "alarms[0].above", edit: func(dir string) string {
			return base(dir, "", "", "  - {name: u, gauge: p1, above: 1e-400 Pa}\n")
		}},
		{name: "below absolute zero", want: "alarms[0].below", edit: func(dir string) string {
			return base(dir, "", "", "  - {name: t, gauge: t1, below: -300 C}\n")
		}},
		{name: "duplicate key", want: "first set at line", edit: func(dir string) string {
			return base(dir, "", "    interval: 2s\n    interval: 3s\n", "")
		}},
		{name: "reconnect", want: "links.net.tcp.reconnect.min", edit: func(dir string) string {
			return base(dir, "", "", "") + "" // links appended below
		}},
	} {
		t.Run(c.name, func(t *testing.T) {
			dir := t.TempDir()
			text := c.edit(dir)
			if c.name == "reconnect" {
				text = strings.Replace(text, "links:\n", "links:\n  net: {tcp: {address: 127.0.0.1:9, reconnect: {min: -1s}}}\n", 1)
			}
			if c.token != "-" && strings.Contains(text, "token_file") {
				perm := c.perm
				if perm == 0 {
					perm = 0o600
				}
				tf := filepath.Join(dir, "token")
				if err := os.WriteFile(tf, []byte(c.token), perm); err != nil {
					t.Fatal(err)
				}
				if err := os.Chmod(tf, perm); err != nil { // past the umask
					t.Fatal(err)
				}
			}
			path := filepath.Join(dir, "holdfast.yaml")
			if err := os.WriteFile(path, []byte(text), 0o600); err != nil {
				t.Fatal(err)
			}
			_, checkErr := config.CheckConfig(path)
			runErr := runStart(path)
			if checkErr == nil || !strings.Contains(checkErr.Error(), c.want) {
				t.Errorf("check: got %v, want an error with %q", checkErr, c.want)
			}
			if runErr == nil || !strings.Contains(runErr.Error(), c.want) {
				t.Errorf("run: got %v, want an error with %q", runErr, c.want)
			}
		})
	}
}

// runStart does what holdfast run does before polling: load, then build.
func runStart(path string) error {
	cfg, err := config.LoadConfig(path)
	if err != nil {
		return err
	}
	d, err := New(cfg, Options{})
	if err != nil {
		return err
	}
	d.ln.Close()
	return d.closeAll()
}

// base is a valid config with extra lines under store:, under gauge p1
// and under alarms:.
func base(dir, store, gauge, alarms string) string {
	s := "chamber: {name: agree, volume: 10 L}\n" +
		"store:\n  dir: " + filepath.Join(dir, "data") + "\n" + store +
		"links:\n  sim: {simulator: {rough_pump: {speed: 2 m3/h}}}\n" +
		"gauges:\n  p1:\n    link: sim\n    driver: sim\n    instrument: pirani\n    kind: pressure\n    interval: 1s\n" + gauge +
		"  t1: {link: sim, driver: sim, instrument: thermocouple, kind: temperature}\n"
	if alarms != "" {
		s += "alarms:\n" + alarms
	}
	return s
}

// A token or secret file others may read is noted by both loaders (run
// logs the note as a warning through SecretWarnings), not refused; a
// duplicate key is one line naming where the key was first set.
func TestSecretReadableWarnsAndDuplicateIsOneLine(t *testing.T) {
	dir := t.TempDir()
	tf := filepath.Join(dir, "token")
	if err := os.WriteFile(tf, []byte("0123456789abcdef0123\n"), 0o600); err != nil {
		t.Fatal(err)
	}
	if err := os.Chmod(tf, 0o644); err != nil {
		t.Fatal(err)
	}
	path := filepath.Join(dir, "holdfast.yaml")
	if err := os.WriteFile(path, []byte(base(dir, "", "", "")+"http: {listen: 127.0.0.1:0, token_file: "+tf+"}\n"), 0o600); err != nil {
		t.Fatal(err)
	}
	for name, load := range map[string]func(string) (*config.Config, error){"check": config.CheckConfig, "run": config.LoadConfig} {
		cfg, err := load(path)
		if err != nil {
			t.Fatalf("%s: %v", name, err)
		}
		w := config.SecretWarnings(cfg)
		if len(w) != 1 || !strings.Contains(w[0], "http.token_file") || !strings.Contains(w[0], "mode 0644") {
			t.Errorf("%s: warnings %q, want one about http.token_file mode 0644", name, w)
		}
	}

	// Line 13 repeats p1's interval, first set on line 12 (counted in base's text).
	if err := os.WriteFile(path, []byte(base(dir, "", "    interval: 2s\n", "")), 0o600); err != nil {
		t.Fatal(err)
	}
	_, err := config.CheckConfig(path)
	want := path + `:13: gauges.p1.interval: duplicate key "interval", first set at line 12; keep one`
	if err == nil || err.Error() != want {
		t.Errorf("got %v\nwant %s", err, want)
	}
}
