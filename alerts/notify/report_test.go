package notify

import (
	"slices"
	"strings"
	"testing"
	"time"
)

func TestReportEventText(t *testing.T) {
	tr := Transition{Chamber: "bake-2", Event: EventReport, At: time.Date(2026, 3, 2, 7, 0, 0, 0, time.UTC),
		Message: "report for 2026-03-01 07:00 to 2026-03-02 07:00 UTC: 2 alarm(s) raised, 1 cleared, 1 still active",
		Link:    "http://127.0.0.1:9781/api/v1/reports/report-bake-2-2026-03-02T0700.html", DedupeKey: "bake-2/report/x"}
	if got, want := Subject([]Transition{tr}), "[report] bake-2: "+tr.Message; got != want {
		t.Errorf("Subject = %q, want %q", got, want)
	}
	d := Describe(tr)
	if !strings.Contains(d, "link:      "+tr.Link+"\n") || strings.Contains(d, "alarm:") || strings.Contains(d, "severity:") {
		t.Errorf("Describe lacks the link or names an alarm:\n%s", d)
	}
	if env := Environ(tr); !slices.Contains(env, "HOLDFAST_LINK="+tr.Link) || !slices.Contains(env, "HOLDFAST_EVENT=report") {
		t.Errorf("Environ = %q; want HOLDFAST_LINK and HOLDFAST_EVENT=report", env)
	}
	// An alarm transition is written as before, with an empty link.
	al := Transition{Chamber: "bake-2", Alarm: "wall-hot", Event: EventRaised, Severity: "high"}
	if got := Subject([]Transition{al}); got != "[high] bake-2: wall-hot raised" {
		t.Errorf("alarm Subject = %q", got)
	}
	if env := Environ(al); !slices.Contains(env, "HOLDFAST_LINK=") {
		t.Errorf("alarm Environ lacks an empty HOLDFAST_LINK: %q", env)
	}
}
