package config

import (
	"fmt"
	"strings"
	"time"

	"gopkg.in/yaml.v3"
)

// Retention says how long each tier of stored data is kept (store.retention):
// the raw samples, their minute roll-ups and their hour roll-ups. Two forms:
//
//	retention: 30d                                  # the raw samples' retention
//	retention: {raw: 30d, minute: 1y, hour: 10y}    # each tier's
//
// A tier left out (or 0) is kept for ever, except that when the raw samples
// have a retention and the roll-ups none, the roll-ups keep theirs by
// default (DefaultMinuteRetention, DefaultHourRetention, or the raw one
// when that is longer): a month of raw samples is then still a year of
// minutes and ten years of hours.
type Retention struct {
	Raw    Duration `yaml:"raw"`
	Minute Duration `yaml:"minute"`
	Hour   Duration `yaml:"hour"`
}

// Default roll-up retentions once the raw samples have one.
const (
	DefaultMinuteRetention = 365 * 24 * time.Hour
	DefaultHourRetention   = 10 * 365 * 24 * time.Hour
)

// minRetention is the shortest retention a tier may have.
const minRetention = 24 * time.Hour

// retentionKeys are the mapping form's keys, in order.
var retentionKeys = []string{"raw", "minute", "hour"}

// UnmarshalYAML reads either form. Unknown keys and bad durations are
// reported as a *yaml.TypeError naming their lines, so decoding goes on.
func (r *Retention) UnmarshalYAML(n *yaml.Node) error {
	if n.Kind == yaml.ScalarNode {
		*r = Retention{}
		return decodeRetention(n, &r.Raw)
	}
	if n.Kind != yaml.MappingNode {
		return typeError(n, "want a duration such as 30d (the raw samples' retention) or {raw: 30d, minute: 1y, hour: 10y}")
	}
	te := &yaml.TypeError{}
	for i := 0; i+1 < len(n.Content); i += 2 {
		k, v := n.Content[i], n.Content[i+1]
		var d *Duration
		switch k.Value {
		case "raw":
			d = &r.Raw
		case "minute":
			d = &r.Minute
		case "hour":
			d = &r.Hour
		default:
			te.Errors = append(te.Errors, fmt.Sprintf("line %d: column %d: unknown key %q under retention (known here: %s)",
				k.Line, k.Column, k.Value, strings.Join(retentionKeys, ", ")))
			continue
		}
		if err := decodeRetention(v, d); err != nil {
			if e, ok := err.(*yaml.TypeError); ok {
				te.Errors = append(te.Errors, e.Errors...)
			}
		}
	}
	if len(te.Errors) > 0 {
		return te
	}
	return nil
}

// decodeRetention reads one tier's duration; years are refused with the
// days to write instead (a year's length is a matter of convention).
func decodeRetention(n *yaml.Node, d *Duration) error {
	if v := strings.TrimSpace(n.Value); n.Kind == yaml.ScalarNode && (strings.HasSuffix(v, "y") || strings.HasSuffix(v, "year") || strings.HasSuffix(v, "years")) {
		return typeError(n, "%q: write years as days, e.g. 365d for a year or 3650d for ten", v)
	}
	return d.UnmarshalYAML(n)
}

// Tiers returns how long the raw samples, the minute and the hour roll-ups
// are kept, defaults applied; 0 keeps a tier for ever.
func (r Retention) Tiers() (raw, minute, hour time.Duration) {
	raw, minute, hour = r.Raw.D(), r.Minute.D(), r.Hour.D()
	if raw > 0 && minute == 0 && r.Hour == 0 {
		minute, hour = max(raw, DefaultMinuteRetention), max(raw, DefaultHourRetention)
	}
	return raw, minute, hour
}

// checkRetention adds store.retention's problems: each tier kept at least a
// day, and no roll-up kept for less time than what it summarises (the
// minute roll-ups rebuild the hours when samples are reprocessed).
func (v *checker) checkRetention(r Retention) {
	for i, d := range []Duration{r.Raw, r.Minute, r.Hour} {
		v.expect(d == 0 || d.D() >= minRetention, "store.retention."+retentionKeys[i],
			"keep at least a day (e.g. %s: 30d), got %s", retentionKeys[i], shortDuration(d.D()))
	}
	raw, minute, hour := r.Tiers()
	longer := func(a, b time.Duration) bool { return a == 0 || (b != 0 && a >= b) } // 0 is for ever
	v.expect(longer(minute, raw), "store.retention.minute",
		"keep the minute roll-ups at least as long as the raw samples (raw %s, minute %s)", forever(raw), forever(minute))
	v.expect(longer(hour, minute), "store.retention.hour",
		"keep the hour roll-ups at least as long as the minute ones (minute %s, hour %s)", forever(minute), forever(hour))
}

// forever prints a retention, 0 as "for ever".
func forever(d time.Duration) string {
	if d == 0 {
		return "for ever"
	}
	return shortDuration(d)
}
