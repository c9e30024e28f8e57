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
	exported := map[string]bool{}
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
			exported[string(m[1])] = true
		}
	}
	if len(exported) < 10 {
		t.Fatalf("found only %d metric names in the daemon's source: the pattern no longer matches how metrics are declared", len(exported))
	}
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
