//go:build linux

package main

import (
	"context"
	"os"
	"path/filepath"
	"regexp"
	"strings"
	"testing"
	"time"
)

// A demo started on a scenario file reloads it: the demo's own store,
// listener and token are applied to the file read again, so they do not
// read as changes that need a restart, and an edited alarm applies.
func TestDemoReloadsItsScenario(t *testing.T) {
	src, err := os.ReadFile(filepath.Join("..", "..", "deploy", "examples", "demo.yaml"))
	if err != nil {
		t.Fatal(err)
	}
	file := filepath.Join(t.TempDir(), "scenario.yaml")
	if err := os.WriteFile(file, src, 0o644); err != nil {
		t.Fatal(err)
	}
	out := newBannerWriter("--token-file ")
	ctx, cancel := context.WithCancel(context.Background())
	done := make(chan error, 1)
	go func() {
		done <- run(ctx, []string{"demo", "--config", file, "--speed", "60", "--listen", "127.0.0.1:0"}, out, &syncBuffer{})
	}()
	defer func() { cancel(); <-done }()
	select {
	case <-out.ready:
	case err := <-done:
		t.Fatalf("demo ended: %v\n%s", err, out.String())
	case <-time.After(20 * time.Second):
		t.Fatalf("no token line from the demo:\n%s", out.String())
	}
	addr := regexp.MustCompile(`metrics at http://([^/]+)/metrics`).FindStringSubmatch(out.String())
	tok := regexp.MustCompile(`--token-file (\S+)`).FindStringSubmatch(out.String())
	if addr == nil || tok == nil {
		t.Fatalf("no address or token in:\n%s", out.String())
	}
	edited := strings.Replace(string(src), "    above: 0.3 Pa\n", "    above: 0.5 Pa\n", 1)
	if edited == string(src) {
		t.Fatal("the scenario's chamber-not-holding limit is no longer 0.3 Pa; update the test")
	}
	if err := os.WriteFile(file, []byte(edited), 0o644); err != nil {
		t.Fatal(err)
	}
	stdout, stderr, err := runCmd(t, "reload", "--daemon", "http://"+addr[1], "--token-file", tok[1])
	if err != nil || !strings.Contains(stdout, "alarms changed: chamber-not-holding") {
		t.Errorf("reload of the demo's scenario: %v\nstdout %s\nstderr %s", err, stdout, stderr)
	}
}
