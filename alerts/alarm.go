package alerts

import (
	"fmt"
	"time"
)

// A Severity ranks how urgently a person must act on an alarm.
type Severity string

// SeverityCritical is the highest severity: such an alarm is never shelved
// without an end given.
const SeverityCritical Severity = "critical"

// A State is one of the alarm states of IEC 62682 (ISA-18.2).
type State string

// The states an alarm can be in. The first four follow the process and the
// operator's acknowledgement; the last three are set by people (shelved,
// out of service) or by design (suppressed) and hide the alarm from
// annunciation while they last.
const (
	Normal                 State = "normal"
	Unacknowledged         State = "unacknowledged"          // active, not yet acknowledged
	Acknowledged           State = "acknowledged"            // active, acknowledged
	ReturnedUnacknowledged State = "returned-unacknowledged" // back to normal before anyone acknowledged it
	Shelved                State = "shelved"                 // hidden by an operator until an expiry
	Suppressed             State = "suppressed"              // hidden by design (the plant state makes it meaningless)
	OutOfService           State = "out-of-service"          // taken out for maintenance
)

// States lists every state in a fixed order, for metrics.
func States() []State {
	return []State{Normal, Unacknowledged, Acknowledged, ReturnedUnacknowledged, Shelved, Suppressed, OutOfService}
}

// An EventKind says what happened to an alarm.
type EventKind string

// The events an Engine reports. LimitCrossed is informational (the on-delay
// starts) and changes no state; every other kind is a state transition and
// carries a DedupeKey.
const (
	LimitCrossed EventKind = "limit-crossed" // the condition became true; the on-delay runs
	Raised       EventKind = "raised"        // the condition held for the on-delay
	Cleared      EventKind = "cleared"       // the condition held false for the off-delay
	Acked        EventKind = "acknowledged"  // a person acknowledged the alarm
	ShelvedEv    EventKind = "shelved"       // a person shelved it, until Event.Until
	Unshelved    EventKind = "unshelved"     // shelving ended (by a person or at its expiry)
	SuppressedEv EventKind = "suppressed"    // suppressed by design
	Unsuppressed EventKind = "unsuppressed"  // suppression lifted
	RemovedEv    EventKind = "out-of-service"
	RestoredEv   EventKind = "in-service"
	Chattering   EventKind = "chattering" // raised too often within the chatter window
)

// An Event is one change of one alarm. Kind, Alarm, Gauge, Severity, At and
// Message are what a person reads; the rest let a notifier build a precise
// message and deliver each transition once.
type Event struct {
	Kind     EventKind
	Alarm    string
	Gauge    string
	Severity Severity
	At       time.Time
	Message  string

	State      State     // the alarm's state after the event
	Value      float64   // the value that decided (SI; NaN when none)
	Limit      float64   // the limit it was compared with (SI; NaN when none)
	Unit       string    // symbol of the unit Message uses, e.g. "mbar"
	Occurrence uint64    // which activation of the alarm (1, 2, ...); 0 before the first
	Seq        uint64    // the alarm's transition number, never reused
	DedupeKey  string    // "<instance>/<alarm>/<seq>/<state>": the same transition always has the same key, and no other has it
	Until      time.Time // shelving expiry (ShelvedEv)
	By         string    // who asked (ack, shelve, ...), when a person did
}

// Transition reports whether the event changed the alarm's state (and so
// should be notified and kept in the history).
func (ev Event) Transition() bool { return ev.Kind != LimitCrossed }

func dedupeKey(instance, alarm string, seq uint64, st State) string {
	if instance == "" {
		return fmt.Sprintf("%s/%d/%s", alarm, seq, st)
	}
	return fmt.Sprintf("%s/%s/%d/%s", instance, alarm, seq, st)
}

// An AlarmStatus is one alarm's current condition, for metrics and the API.
type AlarmStatus struct {
	Alarm      string
	Gauge      string
	Kind       string // the rule kind: limit, rate, rise-watch, ...
	Severity   Severity
	State      State
	Active     bool      // the process condition holds (past the on-delay)
	Acked      bool      // the current occurrence is acknowledged
	Since      time.Time // when the current state began
	Raised     int       // times raised, over the alarm's stored life
	Occurrence uint64
	Chattering bool      // raised at least ChatterCount times within ChatterWindow lately
	Until      time.Time // shelving expiry
	Reason     string    // why shelved, suppressed or out of service
	Message    string    // the last message
	Value      float64   // the last deciding value (SI; NaN when none)
	Limit      float64   // the limit it was held against (SI; NaN when none)
	ValueText  string    // Value in the user's unit
	LimitText  string    // Limit in the user's unit
}
