package daemon

import (
	"bufio"
	"context"
	"fmt"
	"log/slog"
	"net/http/httptest"
	"os"
	"os/exec"
	"path/filepath"
	"strings"
	"syscall"
	"testing"
	"time"

	"holdfast/alerts"
	"holdfast/daemon/config"
	"holdfast/daemon/config/configtest"
)

const restartHelperEnv = "NOTIFY_RESTART_HELPER" // config path, phase

// restartEvents are the helper's transitions; the same on every run.
var restartEvents = func() []alerts.Event {
	t0 := time.Date(2031, 3, 4, 2, 0, 0, 0, time.UTC)
	return []alerts.Event{raiseEvent("vac", alerts.Raised, t0), raiseEvent("vac", alerts.Cleared, t0.Add(time.Minute)),
		raiseEvent("vac", alerts.Raised, t0.Add(time.Hour))}
}()

// TestNotifyRestartHelper is not a test: TestNoResendAfterSIGKILL runs it
// in a child process as a daemon that is killed and started again.
func TestNotifyRestartHelper(t *testing.T) {
	spec := os.Getenv(restartHelperEnv)
	if spec == "" {
		t.Skip("helper for TestNoResendAfterSIGKILL")
	}
	path, phase, _ := strings.Cut(spec, ",")
	cfg, err := config.LoadConfig(path)
	if err != nil {
		fmt.Println("config:", err)
		os.Exit(2)
	}
	logs := make(chan string, 1000)
	d, err := New(cfg, Options{Log: slog.New(logSignal{logs})})
	if err != nil {
		fmt.Println("new:", err)
		os.Exit(2)
	}
	go d.Run(context.Background())
	wait := func(msg string) {
		for m := range logs {
			if m == msg {
				return
			}
		}
	}
	switch phase {
	case "1":
		d.notify(restartEvents[0])
		wait("notification delivered")
		fmt.Println("delivered")
		bufio.NewReader(os.Stdin).ReadString('\n')
		d.notify(restartEvents[1])
		wait("notification not delivered; will retry")
		fmt.Println("queued")
	case "2":
		d.notify(restartEvents[0]) // the engine reports the first again
		d.notify(restartEvents[2])
		fmt.Println("notified")
	}
	time.Sleep(30 * time.Second) // until killed; never outlive a vanished parent
	os.Exit(3)
}

// A daemon SIGKILLed after delivering a transition, and again with another
// still queued, restarts on the same bbolt file, sends the queued one, and
// never sends the delivered one again, even when it is reported again.
func TestNoResendAfterSIGKILL(t *testing.T) {
	dir := t.TempDir()
	writeSecret(t, dir, "hook.key", "restart secret")
	rc := &receiver{secret: []byte("restart secret"), got: map[string]int{}, all: make(chan string, 100)}
	srv := httptest.NewServer(rc)
	defer srv.Close()
	cfgPath := filepath.Join(dir, "holdfast.yaml")
	text := strings.ReplaceAll(configtest.NotifyBase+`
notify:
  - name: hook
    webhook: {url: "`+srv.URL+`/hook", secret_file: DIR/hook.key}
    group_wait: 0s
    retry: {min: 50ms, max: 1s}
`, "DIR", dir)
	if err := os.WriteFile(cfgPath, []byte(text), 0o600); err != nil {
		t.Fatal(err)
	}
	key := func(i int) string { return dedupeKey("bakeout-3", restartEvents[i]) }

	first, lines, stdin := startHelper(t, cfgPath, "1")
	expectLine(t, lines, "delivered")
	rc.mu.Lock()
	rc.fail = 1000 // the receiver goes into maintenance
	rc.mu.Unlock()
	fmt.Fprintln(stdin, "go")
	expectLine(t, lines, "queued")
	kill(t, first)

	rc.mu.Lock()
	rc.fail = 0
	rc.mu.Unlock()
	second, lines, _ := startHelper(t, cfgPath, "2")
	defer kill(t, second)
	expectLine(t, lines, "notified")
	// Wait for the new raise: the queue is FIFO, so the queued clear and
	// any resent first raise would come before it. (rc.all also holds the
	// first raise from before the kill: counting two arrivals would stop
	// on it and the clear, before the new raise came.)
	for k := ""; k != key(2); {
		select {
		case k = <-rc.all:
		case <-time.After(20 * time.Second):
			rc.mu.Lock()
			got := fmt.Sprint(rc.got)
			rc.mu.Unlock()
			t.Fatalf("after restart the receiver has %s", got)
		}
	}
	rc.mu.Lock()
	defer rc.mu.Unlock()
	for i := range restartEvents {
		if rc.got[key(i)] != 1 {
			t.Errorf("%s accepted %d times, want once", key(i), rc.got[key(i)])
		}
	}
	if len(rc.order) != 3 || rc.order[0] != key(0) || rc.order[1] != key(1) || rc.order[2] != key(2) {
		t.Errorf("order %v", rc.order)
	}
}

func startHelper(t *testing.T, cfgPath, phase string) (*exec.Cmd, <-chan string, interface{ Write([]byte) (int, error) }) {
	t.Helper()
	cmd := exec.Command(os.Args[0], "-test.run=^TestNotifyRestartHelper$")
	cmd.Env = append(os.Environ(), restartHelperEnv+"="+cfgPath+","+phase)
	out, _ := cmd.StdoutPipe()
	in, _ := cmd.StdinPipe()
	if err := cmd.Start(); err != nil {
		t.Fatal(err)
	}
	lines := make(chan string, 10)
	go func() {
		sc := bufio.NewScanner(out)
		for sc.Scan() {
			lines <- sc.Text()
		}
		close(lines)
	}()
	return cmd, lines, in
}

func expectLine(t *testing.T, lines <-chan string, want string) {
	t.Helper()
	select {
	case l := <-lines:
		if l != want {
			t.Fatalf("helper said %q, want %q", l, want)
		}
	case <-time.After(20 * time.Second):
		t.Fatalf("helper did not say %q", want)
	}
}

func kill(t *testing.T, cmd *exec.Cmd) {
	t.Helper()
	cmd.Process.Signal(syscall.SIGKILL)
	cmd.Wait()
}
