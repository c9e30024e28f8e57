package notify

import (
	"context"
	"strconv"
	"time"
)

// Events: what happened to an alarm.
const (
	EventRaised       = "raised"
	EventCleared      = "cleared"
	EventAcknowledged = "acknowledged"
	EventShelved      = "shelved"
	EventUnshelved    = "unshelved"
	// EventReport is no alarm: a scheduled report was written; Link says
	// where it is and Message what it holds.
	EventReport = "report"
)

// States after a transition, named as in IEC 62682 / ISA-18.2.
const (
	StateNormal                 = "normal"
	StateUnacknowledged         = "unacknowledged"
	StateAcknowledged           = "acknowledged"
	StateReturnedUnacknowledged = "returned-unacknowledged"
	StateShelved                = "shelved"
	StateSuppressed             = "suppressed"
	StateOutOfService           = "out-of-service"
)

// A Transition is one change of one alarm, as every notifier reports it.
// Its JSON form is the webhook's element; see WebhookBody.
type Transition struct {
	Chamber   string    `json:"chamber"`
	Alarm     string    `json:"alarm"`
	Gauge     string    `json:"gauge"`
	Severity  string    `json:"severity"`       // low, medium, high, critical
	Event     string    `json:"event"`          // raised, cleared, acknowledged, shelved, unshelved
	State     string    `json:"state"`          // the alarm's state after the event
	Value     *float64  `json:"value"`          // the gauge's value in Unit; null when not known
	Limit     *float64  `json:"limit"`          // the limit crossed, in Unit; null when none applies
	Unit      string    `json:"unit"`           // unit of value and limit, as the user configured it
	Quality   string    `json:"quality"`        // the gauge's sample quality (ok, over-range, ...); empty when not known
	Message   string    `json:"message"`        // one line for people, with the numbers
	At        time.Time `json:"at"`             // when the event happened
	Since     time.Time `json:"since,omitzero"` // when the alarm became active, if it is
	DedupeKey string    `json:"dedupe_key"`     // unique per transition and per reminder
	Reminder  int       `json:"reminder"`       // 0: the event itself; n: the n-th reminder of it
	Link      string    `json:"link,omitempty"` // report events: the report's URL
}

// Active reports whether the alarm's condition is present in this state,
// which is what Alertmanager calls firing.
func (t Transition) Active() bool {
	return t.State == StateUnacknowledged || t.State == StateAcknowledged
}

// A Notifier delivers one batch of transitions as one message. It returns
// nil only when the receiver has taken the message; it returns promptly
// once ctx is done.
type Notifier interface {
	Send(ctx context.Context, batch []Transition) error
}

// number formats a value for people: four significant digits.
func number(v *float64) string {
	if v == nil {
		return ""
	}
	return strconv.FormatFloat(*v, 'g', 4, 64)
}
