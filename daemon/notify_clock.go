package daemon

import (
	"net"
	"os"
	"strings"
	"time"
)

// Notifiers take every time from the daemon's one clock. Some receivers
// compare times with their own wall clock: Alertmanager (startsAt, endsAt),
// a webhook receiver checking the signature's age, a mail reader (Date).
// For them a time on the daemon's clock is mapped to wall time.
//
// In production the daemon's clock is the wall clock and the mapping does
// nothing. The demo's clock is the simulator's, which reads the wall time
// at its start and then runs Speed times faster; it is linear in elapsed
// wall time, so one pair of readings taken together fixes the mapping:
//
//	wall(t) = wall0 + (t - clock0) / speed
//
// A simulated hour at --speed 60 is one minute of wall time; an alarm
// raised 2 simulated hours ago started, for Alertmanager, 2 wall minutes ago.
type wallMap struct {
	clock0, wall0 time.Time
	speed         float64 // 0: the clock is the wall clock
}

// newWallMap reads the clock and the wall clock together. A clock with a
// Speed method (sim.Clock) runs that many times faster than the wall;
// any other clock is taken to be wall time.
func newWallMap(c Clock) wallMap {
	s, ok := c.(interface{ Speed() float64 })
	if !ok || !(s.Speed() > 0) {
		return wallMap{}
	}
	return wallMap{clock0: c.Now(), wall0: time.Now(), speed: s.Speed()}
}

// wall maps a time on the daemon's clock to wall time.
func (m wallMap) wall(t time.Time) time.Time {
	if m.speed == 0 || t.IsZero() {
		return t
	}
	return m.wall0.Add(time.Duration(float64(t.Sub(m.clock0)) / m.speed))
}

// daemonURL is the daemon's base URL for links in notifications: the
// configured one, or http://<listen address>, with an unspecified host
// (0.0.0.0, ::) replaced by the host's name.
func (d *Daemon) daemonURL(configured string) string {
	if configured != "" {
		return strings.TrimSuffix(configured, "/")
	}
	addr := d.conf().HTTP.Listen
	if d.ln != nil {
		addr = d.ln.Addr().String()
	}
	host, port, err := net.SplitHostPort(addr)
	if err != nil {
		return ""
	}
	if ip := net.ParseIP(host); host == "" || (ip != nil && ip.IsUnspecified()) {
		if name, err := os.Hostname(); err == nil {
			host = name
		}
	}
	return d.conf().HTTP.Scheme() + "://" + net.JoinHostPort(host, port)
}
