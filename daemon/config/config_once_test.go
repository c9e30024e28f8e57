package config

import (
	"strings"
	"testing"
	"time"
)

// One mistake is one problem line: a gauge whose exchange sends {cs} and
// captures (?P<cs>...) but has no checksum: setting is told so once, not
// once for send and again for expect.
func TestMissingChecksumReportedOnce(t *testing.T) {
	text := `chamber: {name: bus-lock, volume: 10 L}
store: {dir: ` + t.TempDir() + `}
links: {bus: {serial: {device: /dev/null-holdfast-none, baud: 9600}}}
gauges:
  lock:
    link: bus
    driver: ascii
    address: "07"
    exchange:
      - {send: "TO {addr} READ 1 ~{cs}\r", expect: '^FROM {addr} CH1 (?P<value>\S+) \S+ (?P<status>[A-Z]+) ~(?P<cs>[0-9A-F]{2})$'}
    status: {GOOD: ok}
    kind: pressure
    raw_unit: mbar
    unit: mbar
`
	_, err := ParseConfig("once.yaml", []byte(text))
	if err == nil {
		t.Fatal("no problem reported for a checksum in use but not configured")
	}
	msg := err.Error()
	if n := strings.Count(msg, "\n") + 1; n != 1 || strings.Count(msg, "no checksum is configured") != 1 {
		t.Errorf("want one problem line, got %d:\n%s", n, msg)
	}
	if !strings.HasPrefix(msg, "once.yaml:10: gauges.lock.exchange[0].send:") || !strings.Contains(msg, "exchange[0].expect captures (?P<cs>...)") {
		t.Errorf("problem should name the step's send and expect:\n%s", msg)
	}
}

// Durations in config messages read as a config would write them. Expected
// strings by hand from time.Duration's documented form (8h0m0s for 8 h).
func TestShortDuration(t *testing.T) {
	for d, want := range map[time.Duration]string{
		8 * time.Hour: "8h", 90 * time.Minute: "1h30m", 2 * time.Minute: "2m", 90 * time.Second: "1m30s",
		1500 * time.Millisecond: "1.5s", 250 * time.Millisecond: "250ms", time.Hour + 500*time.Millisecond: "1h0m0.5s", 0: "0s",
	} {
		if got := shortDuration(d); got != want {
			t.Errorf("shortDuration(%v) = %q, want %q", d, got, want)
		}
	}
}
