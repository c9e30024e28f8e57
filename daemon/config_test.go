package daemon

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
			path := filepath.Join("..", "testdata", "config", name+".yaml")
			_, err := LoadConfig(path)
			if err == nil {
				t.Fatal("LoadConfig succeeded; want problems")
			}
			checkGolden(t, filepath.Join("..", "testdata", "config", name+".golden"), err.Error()+"\n")
		})
	}
}

// Every mistake planted in several-mistakes.yaml is reported on its own line.
func TestSeveralMistakesEachNamed(t *testing.T) {
	_, err := LoadConfig(filepath.Join("..", "testdata", "config", "several-mistakes.yaml"))
	if err == nil {
		t.Fatal("want problems")
	}
	msg := err.Error()
	for _, want := range []string{
		":4: chamber.volume: \"30 Torr\" is a pressure", ":6: http.listen:", ":9: store.flush_evry: unknown key",
		":15: links.bench.simulator.timeline[0]: want exactly one action",
		":21: gauges.pirani-1.kind:", ":22: gauges.pirani-1.interval:",
		":24: gauges.ion-1.link: unknown link \"benchh\"", ":28: gauges.ion-1.unit:",
		":32: alarms[0].above: \"10 L\" is a volume", ":33: alarms[0].severity:",
		":34: alarms[1].name: alarm \"too-high\" is already defined", ":35: alarms[1].gauge: unknown gauge",
	} {
		if !strings.Contains(msg, want) {
			t.Errorf("problems lack %q; got:\n%s", want, msg)
		}
	}
}

func TestExamplesAreValid(t *testing.T) {
	files, err := filepath.Glob(filepath.Join("..", "deploy", "examples", "*.yaml"))
	if err != nil || len(files) == 0 {
		t.Fatalf("no example configs found: %v", err)
	}
	files = append(files, filepath.Join("..", "testdata", "config", "minimal.yaml"))
	for _, f := range files {
		t.Run(filepath.Base(f), func(t *testing.T) {
			if _, err := CheckConfig(f); err != nil {
				t.Errorf("%v", err)
			}
		})
	}
}

func TestConfigDefaults(t *testing.T) {
	cfg, err := LoadConfig(filepath.Join("..", "testdata", "config", "minimal.yaml"))
	if err != nil {
		t.Fatal(err)
	}
	g := cfg.Gauges["p1"]
	if got := g.Interval.D(); got != defaultInterval {
		t.Errorf("interval = %s, want %s", got, defaultInterval)
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
