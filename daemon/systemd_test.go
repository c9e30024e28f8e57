package daemon

import (
	"context"
	"net"
	"path/filepath"
	"strings"
	"testing"
	"testing/synctest"
	"time"
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

// The watchdog is fed while polls are on schedule, even when every gauge
// polls less often than the watchdog period, and not once the pollers are
// overdue.
func TestWatchdogFollowsSchedule(t *testing.T) {
	path := filepath.Join(t.TempDir(), "notify.sock")
	c, err := net.ListenUnixgram("unixgram", &net.UnixAddr{Name: path, Net: "unixgram"})
	if err != nil {
		t.Skipf("no unix datagram sockets: %v", err)
	}
	defer c.Close()
	t.Setenv("NOTIFY_SOCKET", path)
	t.Setenv("WATCHDOG_USEC", "100000") // 0.1 s
	t.Setenv("WATCHDOG_PID", "")
	g := fakeGauge("slow", time.Minute, nil)
	d := testDaemon(t, g)
	d.links = []*link{{name: "bus", gauges: []*gauge{g}}}
	synctest.Test(t, func(t *testing.T) {
		d.progress.done()
		ctx, cancel := context.WithTimeout(context.Background(), 400*time.Millisecond)
		defer cancel()
		d.systemdLoop(ctx)
	})
	got := readAll(t, c)
	if !strings.Contains(got, "READY=1") || strings.Count(got, "WATCHDOG=1") < 3 {
		t.Errorf("on schedule with a 1 min gauge: got %q; want READY=1 and WATCHDOG=1 every 50 ms", got)
	}
	synctest.Test(t, func(t *testing.T) {
		d.progress.last.Store(time.Now().Add(-time.Hour).UnixNano()) // the poller hung an hour ago
		ctx, cancel := context.WithTimeout(context.Background(), 300*time.Millisecond)
		defer cancel()
		d.systemdLoop(ctx)
	})
	if got := readAll(t, c); strings.Contains(got, "WATCHDOG=1") {
		t.Errorf("overdue poller: the watchdog was still fed: %q", got)
	}
}

func readAll(t *testing.T, c *net.UnixConn) string {
	t.Helper()
	var sb strings.Builder
	buf := make([]byte, 256)
	for {
		c.SetReadDeadline(time.Now().Add(20 * time.Millisecond))
		n, err := c.Read(buf)
		if err != nil {
			return sb.String()
		}
		sb.Write(buf[:n])
		sb.WriteByte('\n')
	}
}
