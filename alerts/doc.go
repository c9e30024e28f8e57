// Package alerts owns alarms: the rules that watch samples (limits, rates,
// rise watch, stale, fault, disagreement, pump-down deadlines, health
// checks, hold tests and a bake's rules), the alarm states of IEC 62682 and
// the engine that runs them, shelving, the rate-of-rise leak analysis and
// pump-down maths. The notifiers live in alerts/notify.
//
// The analysis part is pure functions over values and times. alerts must not
// poll hardware; it may import calib for the sample type.
package alerts
