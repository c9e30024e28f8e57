// Package alerts owns alarms: the rules that watch samples (limits now;
// rates, rise watch, stale and fault rules to come), the alarm states of
// IEC 62682, the rate-of-rise leak analysis, hold tests, and notifiers.
//
// The analysis part is pure functions over values and times. alerts must not
// poll hardware; it may import calib for the sample type.
package alerts
