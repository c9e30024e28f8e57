package notify

import (
	"fmt"
	"strings"
	"time"
)

// Caution ends every message meant for people.
const Caution = "holdfast is a monitoring aid, not a safety interlock: " +
	"check the chamber in person and follow local codes and your site's procedures."

// Summary is one line about a transition: chamber, alarm, what happened,
// and the numbers when known.
func Summary(t Transition) string {
	if t.Event == EventReport {
		return t.Chamber + ": " + t.Message
	}
	var b strings.Builder
	fmt.Fprintf(&b, "%s: %s %s", t.Chamber, t.Alarm, t.Event)
	if t.Reminder > 0 {
		fmt.Fprintf(&b, " (reminder %d: still %s)", t.Reminder, t.State)
	}
	switch {
	case t.Value != nil:
		fmt.Fprintf(&b, ", %s = %s %s", t.Gauge, number(t.Value), t.Unit)
		if t.Limit != nil {
			fmt.Fprintf(&b, " (limit %s %s)", number(t.Limit), t.Unit)
		}
	case t.Gauge != "" && t.Quality != "":
		fmt.Fprintf(&b, ", %s has no value (%s)", t.Gauge, t.Quality)
	}
	return b.String()
}

// NoValue says why a transition carries no value, for receivers that
// show fields: the gauge's quality, or "not known".
func NoValue(t Transition) string {
	if t.Quality != "" {
		return "no value (" + t.Quality + ")"
	}
	return "no value"
}

// Describe is a transition in full, one field a line, for mail bodies and
// Alertmanager descriptions.
func Describe(t Transition) string {
	var b strings.Builder
	line := func(k, v string) {
		if v != "" {
			fmt.Fprintf(&b, "%-10s %s\n", k+":", v)
		}
	}
	line("chamber", t.Chamber)
	line("alarm", t.Alarm)
	line("gauge", t.Gauge)
	line("severity", t.Severity)
	line("event", t.Event)
	line("state", t.State)
	if t.Value != nil {
		line("value", number(t.Value)+" "+t.Unit)
	} else if t.Gauge != "" {
		line("value", NoValue(t))
	}
	line("quality", t.Quality)
	if t.Limit != nil {
		line("limit", number(t.Limit)+" "+t.Unit)
	}
	line("at", t.At.UTC().Format(time.RFC3339))
	if !t.Since.IsZero() {
		line("active", "since "+t.Since.UTC().Format(time.RFC3339))
	}
	if t.Reminder > 0 {
		line("reminder", fmt.Sprintf("%d (not acknowledged yet)", t.Reminder))
	}
	line("message", t.Message)
	line("link", t.Link)
	line("key", t.DedupeKey)
	return b.String()
}

// Subject is a one-line title for a batch.
func Subject(batch []Transition) string {
	if len(batch) == 1 && batch[0].Event == EventReport {
		return "[report] " + Summary(batch[0])
	}
	if len(batch) == 1 {
		return "[" + batch[0].Severity + "] " + Summary(batch[0])
	}
	names := make([]string, 0, len(batch))
	for _, t := range batch {
		names = append(names, t.Alarm+" "+t.Event)
	}
	return fmt.Sprintf("[%s] %s: %d alarm changes: %s", highest(batch), batch[0].Chamber, len(batch), strings.Join(names, ", "))
}

var severityRank = map[string]int{"low": 1, "medium": 2, "high": 3, "critical": 4}

// highest is the most urgent severity in a batch.
func highest(batch []Transition) string {
	best := ""
	for _, t := range batch {
		if severityRank[t.Severity] > severityRank[best] {
			best = t.Severity
		}
	}
	return best
}

// SeverityAtLeast reports whether s ranks at or above min (unknown
// severities rank lowest; an empty min admits everything).
func SeverityAtLeast(s, min string) bool { return severityRank[s] >= severityRank[min] }
