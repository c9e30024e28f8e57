package config

import (
	"path/filepath"
	"reflect"
	"strings"
	"testing"
)

// diffBase is a working config with two links, three gauges, an alarm and
// a notifier; each case below edits it.
const diffBase = `chamber: {name: diff-bench, volume: 30 L}
http: {listen: "127.0.0.1:0"}
store: {dir: /tmp/unused}
links:
  bench:
    simulator: {rough_pump: {speed: 5 m3/h, ultimate: 1 Pa}, seed: 1}
  rack:
    tcp: {address: "127.0.0.1:4001"}
gauges:
  pirani: {link: bench, driver: sim, instrument: pirani, kind: pressure, interval: 1s}
  wall: {link: bench, driver: sim, instrument: thermocouple, kind: temperature}
  fore: {link: rack, driver: scpi, kind: pressure, query: "MEAS:PRES?"}
alarms:
  - name: rough-high
    gauge: pirani
    above: 100 Pa
notify:
  - name: lab-exec
    exec: {command: /bin/true}
`

func TestDiff(t *testing.T) {
	old := mustParse(t, diffBase)
	for _, c := range []struct {
		name string
		edit func(string) string
		want Changes
	}{
		{"same text", func(s string) string { return s }, Changes{}},
		{"defaults written out", func(s string) string {
			return strings.Replace(s, "kind: temperature}", "kind: temperature, interval: 1s}", 1)
		}, Changes{}},
		{"comments and order", func(s string) string {
			return "# moved\n" + strings.Replace(s, "  pirani: {link: bench, driver: sim, instrument: pirani, kind: pressure, interval: 1s}\n", "", 1) +
				"" // pirani re-added below, after fore
		}, Changes{}},
		{"gauge added", func(s string) string {
			return strings.Replace(s, "alarms:", "  ion: {link: bench, driver: sim, instrument: ion, kind: pressure}\nalarms:", 1)
		}, Changes{Gauges: Set{Added: []string{"ion"}}}},
		{"gauge removed", func(s string) string {
			return strings.Replace(s, "  wall: {link: bench, driver: sim, instrument: thermocouple, kind: temperature}\n", "", 1)
		}, Changes{Gauges: Set{Removed: []string{"wall"}}}},
		{"gauge changed", func(s string) string { return strings.Replace(s, "interval: 1s", "interval: 2s", 1) },
			Changes{Gauges: Set{Changed: []string{"pirani"}}}},
		{"link changed", func(s string) string { return strings.Replace(s, "127.0.0.1:4001", "127.0.0.1:4002", 1) },
			Changes{Links: Set{Changed: []string{"rack"}}}},
		{"alarm changed, notifier removed", func(s string) string {
			s = strings.Replace(s, "above: 100 Pa", "above: 200 Pa", 1)
			return s[:strings.Index(s, "notify:")]
		}, Changes{Alarms: Set{Changed: []string{"rough-high"}}, Notify: Set{Removed: []string{"lab-exec"}}}},
		{"keys", func(s string) string {
			s = strings.Replace(s, "/tmp/unused", "/tmp/other", 1)
			s = strings.Replace(s, `listen: "127.0.0.1:0"`, `listen: "127.0.0.1:9"`, 1)
			return s + "shelving: {max: 12h}\n"
		}, Changes{Keys: []string{"http.listen", "shelving.max", "store.dir"}}},
	} {
		t.Run(c.name, func(t *testing.T) {
			text := c.edit(diffBase)
			if c.name == "comments and order" {
				text = strings.Replace(text, "alarms:", "  pirani: {link: bench, driver: sim, instrument: pirani, kind: pressure, interval: 1s}\nalarms:", 1)
			}
			got := Diff(old, mustParse(t, text))
			if !reflect.DeepEqual(got, c.want) {
				t.Errorf("Diff:\n%s\nwant:\n%s", got, c.want)
			}
		})
	}
}

func TestChangesString(t *testing.T) {
	c := Changes{Gauges: Set{Added: []string{"a", "b"}, Removed: []string{"c"}}, Keys: []string{"store.dir"}}
	want := "gauges added: a, b\ngauges removed: c\nchanged: store.dir"
	if got := c.String(); got != want {
		t.Errorf("String() = %q, want %q", got, want)
	}
	if got := (Changes{}).String(); got != "no changes" {
		t.Errorf("empty String() = %q", got)
	}
}

func mustParse(t *testing.T, text string) *Config {
	t.Helper()
	cfg, err := ParseConfig("diff.yaml", []byte(text))
	if err != nil {
		t.Fatalf("%v\nin:\n%s", err, text)
	}
	return cfg
}

// Every shipped example, loaded twice, has no changes: nothing the checker
// derives (secrets, resolved limits, compiled values) differs between loads.
func TestDiffExamplesSelf(t *testing.T) {
	files, err := filepath.Glob(filepath.Join("..", "..", "deploy", "examples", "*.yaml"))
	if err != nil || len(files) == 0 {
		t.Fatalf("no examples: %v", err)
	}
	for _, f := range files {
		a, errA := LoadConfig(f)
		b, errB := LoadConfig(f)
		if errA != nil || errB != nil {
			continue // TestExamplesAreValid reports it
		}
		if c := Diff(a, b); !c.Empty() {
			t.Errorf("%s against itself:\n%s", f, c)
		}
	}
}
