//go:build linux

package main

import (
	"bufio"
	"context"
	"os"
	"os/exec"
	"strings"
	"syscall"
	"testing"
)

const simulateHelperEnv = "HOLDFAST_SIMULATE_HELPER" // the --pty path

// TestSimulateKilledHelper is not a test: TestSimulateRestartsAfterSIGKILL
// runs it in a child process as a holdfast simulate that is killed.
func TestSimulateKilledHelper(t *testing.T) {
	dev := os.Getenv(simulateHelperEnv)
	if dev == "" {
		t.Skip("helper for TestSimulateRestartsAfterSIGKILL")
	}
	err := run(context.Background(), []string{"simulate", "--pty", dev, "--config", example("pty-sim.yaml")}, os.Stdout, os.Stderr)
	t.Fatalf("simulate returned: %v", err)
}

// A simulate killed with SIGKILL leaves its link behind, pointing at a
// pseudo-terminal number the kernel hands out again, often to the next
// simulate itself, whose own new pseudo-terminal then makes the old link
// look live. Starting simulate again must not take that for a live
// simulate: the kernel released the dead one's lock. While one runs, a
// second is still refused.
func TestSimulateRestartsAfterSIGKILL(t *testing.T) {
	dev := t.TempDir() + "/port"
	cmd := exec.Command(os.Args[0], "-test.run=^TestSimulateKilledHelper$")
	cmd.Env = append(os.Environ(), simulateHelperEnv+"="+dev)
	out, err := cmd.StdoutPipe()
	if err != nil {
		t.Fatal(err)
	}
	if err := cmd.Start(); err != nil {
		t.Fatal(err)
	}
	defer cmd.Process.Kill()
	sc := bufio.NewScanner(out)
	for sc.Scan() && !strings.Contains(sc.Text(), "Ctrl-C stops") {
	}
	if err := run(context.Background(), []string{"simulate", "--pty", dev, "--config", example("pty-sim.yaml")}, &strings.Builder{}, &strings.Builder{}); err == nil ||
		!strings.Contains(err.Error(), "another holdfast simulate") {
		t.Errorf("a second simulate while the first runs: %v; want it refused", err)
	}
	if err := cmd.Process.Signal(syscall.SIGKILL); err != nil {
		t.Fatal(err)
	}
	_ = cmd.Wait()
	started := startSimulate(t, dev, "--config", example("pty-sim.yaml"))
	if !strings.Contains(started.String(), "replacing "+dev) {
		t.Errorf("restart output does not say the stale link was replaced:\n%s", started)
	}
}
