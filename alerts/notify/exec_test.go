package notify

import (
	"fmt"
	"os"
	"path/filepath"
	"slices"
	"strings"
	"testing"
	"time"
)

const execHelperEnv = "NOTIFY_EXEC_HELPER"

// TestExecHelper is not a test: Exec runs the test binary with it as the
// notifier command. It writes its HOLDFAST_* variables to a file, fails,
// or hangs, as NOTIFY_EXEC_HELPER says.
func TestExecHelper(t *testing.T) {
	mode, arg, _ := strings.Cut(os.Getenv(execHelperEnv), ":")
	switch mode {
	case "":
		t.Skip("helper for the Exec tests")
	case "dump":
		var env []string
		for _, e := range os.Environ() {
			if strings.HasPrefix(e, "HOLDFAST_") {
				env = append(env, e)
			}
		}
		slices.Sort(env)
		os.WriteFile(arg, []byte(strings.Join(env, "\n")), 0o600)
		os.Exit(0)
	case "fail":
		fmt.Fprintln(os.Stderr, "paging gateway said no")
		os.Exit(3)
	case "hang":
		time.Sleep(time.Minute)
		os.Exit(0)
	}
}

func helperExec(mode string, timeout time.Duration) *Exec {
	return &Exec{Command: os.Args[0], Args: []string{"-test.run=^TestExecHelper$"}, Timeout: timeout,
		Env: append(os.Environ(), execHelperEnv+"="+mode, "HOLDFAST_ALARM=stale-from-parent")}
}

func TestExecEnvironment(t *testing.T) {
	out := filepath.Join(t.TempDir(), "env")
	tr := exampleRaise()
	tr.Message = "line one\nline two" // multi-line values survive
	if err := helperExec("dump:"+out, 20*time.Second).Send(t.Context(), []Transition{tr}); err != nil {
		t.Fatal(err)
	}
	b, err := os.ReadFile(out)
	if err != nil {
		t.Fatal(err)
	}
	got := string(b)
	for _, want := range []string{
		"HOLDFAST_ALARM=rough-vacuum-lost", "HOLDFAST_CHAMBER=bakeout-3", "HOLDFAST_GAUGE=chamber",
		"HOLDFAST_SEVERITY=high", "HOLDFAST_EVENT=raised", "HOLDFAST_STATE=unacknowledged",
		"HOLDFAST_VALUE=12.5", "HOLDFAST_LIMIT=10", "HOLDFAST_UNIT=Pa", "HOLDFAST_AT=2031-03-04T02:17:05Z",
		"HOLDFAST_DEDUPE_KEY=" + tr.DedupeKey, "HOLDFAST_REMINDER=0", "HOLDFAST_MESSAGE=line one\nline two",
	} {
		if !strings.Contains(got, want+"\n") && !strings.HasSuffix(got, want) {
			t.Errorf("environment lacks %q:\n%s", want, got)
		}
	}
	if strings.Contains(got, "stale-from-parent") {
		t.Error("an inherited HOLDFAST_ variable reached the command")
	}
}

func TestExecFailureAndTimeout(t *testing.T) {
	err := helperExec("fail", 20*time.Second).Send(t.Context(), []Transition{exampleRaise()})
	if err == nil || !strings.Contains(err.Error(), "exit status 3") || !strings.Contains(err.Error(), "paging gateway said no") {
		t.Errorf("failing command: %v, want its exit status and output", err)
	}
	err = helperExec("hang", 300*time.Millisecond).Send(t.Context(), []Transition{exampleRaise()})
	if err == nil || !strings.Contains(err.Error(), "timeout") {
		t.Errorf("hanging command: %v, want a timeout", err)
	}
}
