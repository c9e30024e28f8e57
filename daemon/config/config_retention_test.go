package config

import (
	"strings"
	"testing"
	"time"
)

// retentionConfig is the minimal config with a store.retention line.
func retentionConfig(retention string) []byte {
	return []byte(`chamber: {name: minimal, volume: 10 L}
store:
  dir: /tmp/holdfast-minimal
  retention: ` + retention + `
links:
  sim: {simulator: {rough_pump: {speed: 2 m3/h}}}
gauges:
  p1: {link: sim, driver: sim, instrument: pirani, kind: pressure}
`)
}

func TestRetentionBothForms(t *testing.T) {
	day := 24 * time.Hour
	for _, c := range []struct {
		yaml              string
		raw, minute, hour time.Duration
	}{
		// The old single duration is the raw samples'; the roll-ups then
		// keep the defaults (365 and 3650 days).
		{"30d", 30 * day, 365 * day, 3650 * day},
		{"{raw: 30d, minute: 400d, hour: 4000d}", 30 * day, 400 * day, 4000 * day},
		{"{raw: 30d, minute: 400d}", 30 * day, 400 * day, 0}, // hours for ever
		{"{minute: 90d}", 0, 0, 0},                           // raw for ever: refused below
		{"800d", 800 * day, 800 * day, 3650 * day},           // a roll-up never shorter than the raw samples
	} {
		cfg, err := ParseConfig("r.yaml", retentionConfig(c.yaml))
		if c.yaml == "{minute: 90d}" {
			if err == nil || !strings.Contains(err.Error(), "r.yaml:4: store.retention.minute: keep the minute roll-ups at least as long as the raw samples") {
				t.Errorf("%s: got %v; want the minute tier refused, naming line 4", c.yaml, err)
			}
			continue
		}
		if err != nil {
			t.Fatalf("%s: %v", c.yaml, err)
		}
		raw, minute, hour := cfg.Store.Retention.Tiers()
		if raw != c.raw || minute != c.minute || hour != c.hour {
			t.Errorf("%s: raw %s, minute %s, hour %s; want %s, %s, %s", c.yaml, raw, minute, hour, c.raw, c.minute, c.hour)
		}
	}
}

func TestRetentionProblemsNameTheLineAndTheFix(t *testing.T) {
	for _, c := range []struct{ yaml, want string }{
		{"{raw: 30d, minutes: 1y}", `r.yaml:4: store.retention: unknown key "minutes" under retention (known here: raw, minute, hour)`},
		{"{raw: 30d, minute: 1y}", `write years as days, e.g. 365d`},
		{"12h", "r.yaml:4: store.retention.raw: keep at least a day"},
		{"{raw: 30d, minute: 60d, hour: 40d}", "store.retention.hour: keep the hour roll-ups at least as long as the minute ones"},
		{"[30d]", "want a duration such as 30d"},
	} {
		_, err := ParseConfig("r.yaml", retentionConfig(c.yaml))
		if err == nil || !strings.Contains(err.Error(), c.want) {
			t.Errorf("%s: got %v; want a problem containing %q", c.yaml, err, c.want)
		}
	}
}
