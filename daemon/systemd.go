package daemon

import (
	"context"
	"net"
	"os"
	"strconv"
	"strings"
	"sync/atomic"
	"time"
)

// sdNotify sends one state message to systemd's notification socket, if
// the daemon runs under systemd (NOTIFY_SOCKET set); otherwise it does nothing.
func sdNotify(state string) error {
	path := os.Getenv("NOTIFY_SOCKET")
	if path == "" {
		return nil
	}
	if strings.HasPrefix(path, "@") {
		path = "\x00" + path[1:] // abstract namespace
	}
	c, err := net.DialUnix("unixgram", nil, &net.UnixAddr{Name: path, Net: "unixgram"})
	if err != nil {
		return err
	}
	defer c.Close()
	_, err = c.Write([]byte(state))
	return err
}

// watchdogInterval is how often systemd wants a keep-alive, or 0 when
// WatchdogSec= is not set for this process.
func watchdogInterval() time.Duration {
	us, err := strconv.ParseInt(os.Getenv("WATCHDOG_USEC"), 10, 64)
	if err != nil || us <= 0 {
		return 0
	}
	if pid := os.Getenv("WATCHDOG_PID"); pid != "" && pid != strconv.Itoa(os.Getpid()) {
		return 0
	}
	return time.Duration(us) * time.Microsecond
}

// progress records completed polls, so the watchdog is fed only while the
// pollers make progress, not by a bare ticker.
type progress struct {
	polls atomic.Uint64
	last  atomic.Int64 // wall-clock Unix ns of the last completed poll
}

func (p *progress) done() {
	p.polls.Add(1)
	p.last.Store(time.Now().UnixNano())
}

// longestPeriod is the longest a healthy link may go without completing a
// poll: its slowest gauge's interval plus that gauge's timeout.
func (d *Daemon) longestPeriod() time.Duration {
	var longest time.Duration
	for _, l := range d.links {
		for _, g := range l.gauges {
			longest = max(longest, g.cfg.Interval.D()+g.cfg.Timeout.D())
		}
	}
	return longest
}

// systemdLoop tells systemd the daemon is ready, feeds its watchdog while
// polls complete, and says it is stopping when ctx is done.
func (d *Daemon) systemdLoop(ctx context.Context) {
	d.liveMu.RLock()
	n, longest := len(d.gauges), d.longestPeriod() // the config at the start; a reload keeps the watchdog's bound
	d.liveMu.RUnlock()
	if err := sdNotify("READY=1\nSTATUS=polling " + strconv.Itoa(n) + " gauges"); err != nil {
		d.log.Warn("cannot notify systemd", "err", err)
	}
	defer sdNotify("STOPPING=1")
	iv := watchdogInterval()
	if iv == 0 {
		<-ctx.Done()
		return
	}
	t := time.NewTicker(iv / 2)
	defer t.Stop()
	// Overdue means no poll completed for longer than the slowest gauge's
	// interval and timeout (and half a watchdog period of slack): a hung
	// poller, not a config with slow gauges.
	overdue := longest + iv/2
	start := time.Now()
	for {
		select {
		case <-ctx.Done():
			return
		case now := <-t.C:
			last := start
			if ns := d.progress.last.Load(); ns != 0 {
				last = time.Unix(0, ns)
			}
			d.liveMu.RLock()
			idle := len(d.links) == 0
			d.liveMu.RUnlock()
			if idle || now.Sub(last) <= overdue {
				sdNotify("WATCHDOG=1")
			} else {
				d.log.Error("no poll completed for longer than any gauge's interval; systemd will restart the daemon",
					"since_seconds", now.Sub(last).Seconds(), "watchdog_seconds", iv.Seconds())
			}
		}
	}
}
