package daemon

import (
	"net"
	"path/filepath"
	"testing"
)

// sdNotify speaks systemd's protocol: one datagram of KEY=VALUE lines to
// the socket in NOTIFY_SOCKET (sd_notify(3)).
func TestSdNotify(t *testing.T) {
	path := filepath.Join(t.TempDir(), "notify.sock")
	c, err := net.ListenUnixgram("unixgram", &net.UnixAddr{Name: path, Net: "unixgram"})
	if err != nil {
		t.Skipf("no unix datagram sockets: %v", err)
	}
	defer c.Close()
	t.Setenv("NOTIFY_SOCKET", path)
	if err := sdNotify("READY=1"); err != nil {
		t.Fatal(err)
	}
	buf := make([]byte, 64)
	n, err := c.Read(buf)
	if err != nil {
		t.Fatal(err)
	}
	if got := string(buf[:n]); got != "READY=1" {
		t.Errorf("got %q, want READY=1", got)
	}
	t.Setenv("NOTIFY_SOCKET", "")
	if err := sdNotify("READY=1"); err != nil {
		t.Errorf("without systemd: %v", err)
	}
}

func TestWatchdogInterval(t *testing.T) {
	t.Setenv("WATCHDOG_USEC", "30000000")
	t.Setenv("WATCHDOG_PID", "")
	if got := watchdogInterval(); got.Seconds() != 30 {
		t.Errorf("got %s, want 30s", got)
	}
	t.Setenv("WATCHDOG_PID", "1")
	if got := watchdogInterval(); got != 0 {
		t.Errorf("watchdog for another pid: got %s, want 0", got)
	}
}
