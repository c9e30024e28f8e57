package config

import (
	"flag"
	"os"
	"path/filepath"
	"strings"
	"testing"
)

var update = flag.Bool("update", false, "rewrite testdata golden files")

func checkGolden(t *testing.T, path, got string) {
	t.Helper()
	if *update {
		if err := os.WriteFile(path, []byte(got), 0o644); err != nil {
			t.Fatal(err)
		}
		return
	}
	want, err := os.ReadFile(path)
	if err != nil {
		t.Fatalf("read golden (run go test -update to create it): %v", err)
	}
	if got != string(want) {
		t.Errorf("got:\n%s\nwant (%s):\n%s", got, path, want)
	}
}

func TestLoadConfigReportsEveryProblem(t *testing.T) {
	for _, name := range []string{"several-mistakes", "not-yaml", "bad-hardware", "one-line-types"} {
		t.Run(name, func(t *testing.T) {
			path := filepath.Join("..", "..", "testdata", "config", name+".yaml")
			_, err := LoadConfig(path)
			if err == nil {
				t.Fatal("LoadConfig succeeded; want problems")
			}
			checkGolden(t, filepath.Join("..", "..", "testdata", "config", name+".golden"), err.Error()+"\n")
		})
	}
}

// Every mistake planted in a bad fixture is reported on its own line, with
// the line and path typed by hand from the yaml file (not from the golden
// list, which -update rewrites from the code's output). Each fixture also
// gives exactly as many problems as it plants.
func TestPlantedMistakesEachNamed(t *testing.T) {
	for _, c := range []struct {
		name    string
		planted int // mistakes planted in the file, counted by hand
		want    []string
	}{
		{"several-mistakes", 12, []string{
			":4: chamber.volume: \"30 Torr\" is a pressure", ":6: http.listen:", ":9: store.flush_evry: unknown key",
			":15: links.bench.simulator.timeline[0]: want exactly one action",
			":21: gauges.pirani-1.kind:", ":22: gauges.pirani-1.interval:",
			":24: gauges.ion-1.link: unknown link \"benchh\"", ":28: gauges.ion-1.unit:",
			":32: alarms[0].above: \"10 L\" is a volume", ":33: alarms[0].severity:",
			":34: alarms[1].name: alarm \"too-high\" is already defined", ":35: alarms[1].gauge: unknown gauge",
		}},
		// Line 1 opens a flow mapping that never closes.
		{"not-yaml", 1, []string{"not-yaml.yaml:1: not valid YAML"}},
		// Line 35: the expect regexp names (?P<valu>…), not value; line 36:
		// checksum kind sum9; line 70: volts_per_decade 0; line 83: type uint17.
		{"bad-hardware", 4, []string{
			"bad-hardware.yaml:38: gauges.foreline.exchange[0].expect:", "no (?P<value>...) group",
			"bad-hardware.yaml:39: gauges.foreline.checksum.kind:", "\"sum9\"",
			"bad-hardware.yaml:77: gauges.chamber-tc.transfer.log_linear.volts_per_decade:", "got 0",
			"bad-hardware.yaml:90: gauges.process-cdg.modbus.type:", "\"uint17\"",
		}},
		// Line 5: data_bits: eight; line 7: digits: many; line 9: for: 1 century.
		{"one-line-types", 3, []string{
			"one-line-types.yaml:5: links.bus2.serial.data_bits:", "(eight)",
			"one-line-types.yaml:7: gauges.p1.digits:", "(many)",
			"one-line-types.yaml:9: alarms[0].for:", "\"century\"",
		}},
	} {
		t.Run(c.name, func(t *testing.T) {
			_, err := LoadConfig(filepath.Join("..", "..", "testdata", "config", c.name+".yaml"))
			if err == nil {
				t.Fatal("want problems")
			}
			msg := err.Error()
			for _, want := range c.want {
				if !strings.Contains(msg, want) {
					t.Errorf("problems lack %q; got:\n%s", want, msg)
				}
			}
			if got := strings.Count(msg, "\n") + 1; got != c.planted {
				t.Errorf("%d problems, want the %d planted; got:\n%s", got, c.planted, msg)
			}
		})
	}
}

func TestExamplesAreValid(t *testing.T) {
	files, err := filepath.Glob(filepath.Join("..", "..", "deploy", "examples", "*.yaml"))
	if err != nil || len(files) == 0 {
		t.Fatalf("no example configs found: %v", err)
	}
	files = append(files, filepath.Join("..", "..", "testdata", "config", "minimal.yaml"))
	for _, f := range files {
		t.Run(filepath.Base(f), func(t *testing.T) {
			if _, err := CheckConfig(withToken(t, f)); err != nil {
				t.Errorf("%v", err)
			}
		})
	}
}

func TestConfigDefaults(t *testing.T) {
	cfg, err := LoadConfig(filepath.Join("..", "..", "testdata", "config", "minimal.yaml"))
	if err != nil {
		t.Fatal(err)
	}
	g := cfg.Gauges["p1"]
	if got := g.Interval.D(); got != DefaultInterval {
		t.Errorf("interval = %s, want %s", got, DefaultInterval)
	}
	if g.Unit != "Pa" {
		t.Errorf("unit = %q, want Pa", g.Unit)
	}
	if cfg.HTTP.Listen != DefaultListen {
		t.Errorf("listen = %q, want %q", cfg.HTTP.Listen, DefaultListen)
	}
	if got, want := float64(cfg.Chamber.Volume), 0.010; got != want {
		t.Errorf("volume = %g m3, want %g", got, want)
	}
	if got := float64(cfg.Links["sim"].Simulator.StartPressure); got != 101325 {
		t.Errorf("start pressure = %g Pa, want 101325 (1 atm, 10th CGPM)", got)
	}
}
