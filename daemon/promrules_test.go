package daemon

import (
	"context"
	"os"
	"os/exec"
	"path/filepath"
	"regexp"
	"slices"
	"strings"
	"testing"
	"time"

	"gopkg.in/yaml.v3"
)

// The Prometheus rules shipped in deploy/prometheus are checked by promtool
// itself: "check rules" parses them, "test rules" runs their unit tests
// (holdfast-rules-test.yml: each rule firing and not firing). CI installs
// promtool (.ci/run); elsewhere the test skips when it is not on PATH.
func TestPrometheusRules(t *testing.T) {
	runPromtool(t, "the rules are not checked",
		[]string{"check", "rules", "holdfast-rules.yml"},
		[]string{"test", "rules", "holdfast-rules-test.yml"})
}

// runPromtool runs promtool in deploy/prometheus once per argument list and
// fails the test on any failure; without promtool on PATH it skips, saying
// what goes unchecked.
func runPromtool(t *testing.T, unchecked string, argsets ...[]string) {
	t.Helper()
	promtool, err := exec.LookPath("promtool")
	if err != nil {
		t.Skip("promtool not on PATH (Debian: apt-get install prometheus); " + unchecked)
	}
	dir := filepath.Join("..", "deploy", "prometheus")
	for _, args := range argsets {
		ctx, cancel := context.WithTimeout(t.Context(), time.Minute)
		cmd := exec.CommandContext(ctx, promtool, args...)
		cmd.Dir = dir
		out, err := cmd.CombinedOutput()
		cancel()
		if err != nil {
			t.Errorf("promtool %v in %s: %v\n%s", args, dir, err, out)
		} else {
			t.Logf("promtool %v:\n%s", args, out)
		}
	}
}

// Every holdfast metric a rule uses is one the daemon exports, so no rule
// waits on a series that never exists (it would never fire). Needs no
// promtool: the names are read from the rule file and from the daemon's
// metric descriptions in this package's source.
func TestPrometheusRulesUseExportedMetrics(t *testing.T) {
	rules, err := os.ReadFile(filepath.Join("..", "deploy", "prometheus", "holdfast-rules.yml"))
	if err != nil {
		t.Fatal(err)
	}
	exported := declaredMetrics(t)
	var used []string
	for _, line := range regexp.MustCompile(`(?m)^\s*expr:\s*(.*)$`).FindAllSubmatch(rules, -1) {
		for _, m := range regexp.MustCompile(`holdfast_[a-z0-9_]+`).FindAll(line[1], -1) {
			used = append(used, string(m))
		}
	}
	if len(used) == 0 {
		t.Fatal("no holdfast metric found in the rules' expressions")
	}
	for _, name := range used {
		if !exported[name] {
			names := make([]string, 0, len(exported))
			for n := range exported {
				names = append(names, n)
			}
			slices.Sort(names)
			t.Errorf("a rule uses %s, which the daemon does not export (it exports %v)", name, names)
		}
	}
}

// Every rule shipped in deploy/prometheus has unit tests that promtool
// runs (TestPrometheusRules, TestPrometheusFleetFiles): each alert is
// tested both firing and quiet, each recorded series is evaluated. Needs
// no promtool: it reads the rule and test files.
func TestPrometheusRulesAllTested(t *testing.T) {
	for _, f := range []struct{ rules, tests string }{
		{"holdfast-rules.yml", "holdfast-rules-test.yml"},
		{"holdfast-fleet-rules.yml", "holdfast-fleet-rules-test.yml"},
	} {
		var rules struct {
			Groups []struct {
				Rules []struct{ Alert, Record string }
			}
		}
		var tests struct {
			RuleFiles []string `yaml:"rule_files"`
			Tests     []struct {
				Alerts []struct {
					Alertname string
					ExpAlerts []any `yaml:"exp_alerts"`
				} `yaml:"alert_rule_test"`
				Exprs []struct{ Expr string } `yaml:"promql_expr_test"`
			}
		}
		readYAML(t, filepath.Join("..", "deploy", "prometheus", f.rules), &rules)
		readYAML(t, filepath.Join("..", "deploy", "prometheus", f.tests), &tests)
		if !slices.Contains(tests.RuleFiles, f.rules) {
			t.Errorf("%s: rule_files %q does not name %s", f.tests, tests.RuleFiles, f.rules)
		}
		firing, quiet, evaluated := map[string]bool{}, map[string]bool{}, map[string]bool{}
		for _, tc := range tests.Tests {
			for _, a := range tc.Alerts {
				if len(a.ExpAlerts) > 0 {
					firing[a.Alertname] = true
				} else {
					quiet[a.Alertname] = true
				}
			}
			for _, e := range tc.Exprs {
				evaluated[strings.TrimSpace(e.Expr)] = true
			}
		}
		n := 0
		for _, g := range rules.Groups {
			for _, r := range g.Rules {
				n++
				switch {
				case r.Alert != "" && (!firing[r.Alert] || !quiet[r.Alert]):
					t.Errorf("%s: alert %s is tested firing %v, quiet %v; want both in %s", f.rules, r.Alert, firing[r.Alert], quiet[r.Alert], f.tests)
				case r.Record != "" && !evaluated[r.Record]:
					t.Errorf("%s: recorded series %s is never evaluated in %s (promql_expr_test)", f.rules, r.Record, f.tests)
				}
			}
		}
		if n == 0 {
			t.Errorf("%s: no rules read; has the file's layout changed?", f.rules)
		}
	}
}

// declaredMetrics reads the holdfast metric names this package's source
// declares (prometheus.NewDesc or an Opts' Name), whether or not a sample
// of them exists yet.
func declaredMetrics(t *testing.T) map[string]bool {
	t.Helper()
	names := map[string]bool{}
	files, err := filepath.Glob("*.go")
	if err != nil {
		t.Fatal(err)
	}
	decl := regexp.MustCompile(`(?:NewDesc\(|Name:\s*)"(holdfast_[a-z0-9_]+)"`)
	for _, f := range files {
		if strings.HasSuffix(f, "_test.go") {
			continue
		}
		src, err := os.ReadFile(f)
		if err != nil {
			t.Fatal(err)
		}
		for _, m := range decl.FindAllSubmatch(src, -1) {
			names[string(m[1])] = true
		}
	}
	if len(names) < 10 {
		t.Fatalf("found only %d metric names in the daemon's source: the pattern no longer matches how metrics are declared", len(names))
	}
	return names
}

// readYAML decodes a YAML file into v, failing the test on any error.
func readYAML(t *testing.T, path string, v any) {
	t.Helper()
	b, err := os.ReadFile(path)
	if err != nil {
		t.Fatal(err)
	}
	if err := yaml.Unmarshal(b, v); err != nil {
		t.Fatalf("%s: %v", path, err)
	}
}
