// Package alarmstore keeps alarm state, alarm history and hold-test
// reports in the daemon's bbolt file, in buckets of its own. It implements
// alerts.Store, so that after a restart (even a kill) an active alarm is
// still active, nothing is re-sent and nothing is forgotten.
//
// It must not decide anything about alarms: that is the alerts engine's job.
package alarmstore
