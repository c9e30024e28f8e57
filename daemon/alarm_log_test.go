package daemon

import (
	"bytes"
	"encoding/json"
	"log/slog"
	"strings"
	"testing"

	"holdfast/alerts"
)

// Alarm events are process events, not software errors: each is logged once,
// a raise of a high or critical alarm as WARN, everything else as INFO, and
// never as ERROR (common practice: an ERROR line means the software failed).
func TestAlarmEventLogLevel(t *testing.T) {
	for _, c := range []struct {
		kind     alerts.EventKind
		severity alerts.Severity
		want     string
	}{
		{alerts.Raised, "critical", "WARN"},
		{alerts.Raised, "high", "WARN"},
		{alerts.Raised, "medium", "INFO"},
		{alerts.Raised, "low", "INFO"},
		{alerts.Cleared, "critical", "INFO"},
		{alerts.LimitCrossed, "high", "INFO"},
	} {
		var buf bytes.Buffer
		log := slog.New(slog.NewJSONHandler(&buf, &slog.HandlerOptions{Level: slog.LevelDebug}))
		logAlarmEvent(log, alerts.Event{Kind: c.kind, Severity: c.severity, Alarm: "fore-high", Gauge: "fore"})
		lines := strings.Split(strings.TrimSpace(buf.String()), "\n")
		if len(lines) != 1 {
			t.Errorf("%s %s: %d log lines, want 1:\n%s", c.kind, c.severity, len(lines), buf.String())
			continue
		}
		var rec struct{ Level string }
		if err := json.Unmarshal([]byte(lines[0]), &rec); err != nil {
			t.Fatal(err)
		}
		if rec.Level != c.want {
			t.Errorf("%s %s logged at %s, want %s", c.kind, c.severity, rec.Level, c.want)
		}
	}
}
