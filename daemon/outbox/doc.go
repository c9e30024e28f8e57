// Package outbox is the notifiers' durable queue in the daemon's bbolt file.
// Every alarm transition is written here, in the same moment it happens,
// before any network is touched; a delivery loop per notifier then sends
// the queue in order, groups entries that arrive within a short window into
// one send, retries failures with a capped backoff, and removes an entry
// only after its send succeeded. An entry the receiver refuses for good
// (see Permanent) is parked: kept aside with the refusal, and the queue
// goes on behind it.
//
// Delivery is at least once. Each entry carries a dedupe key (one per alarm
// transition); the key stays recorded as delivered after the entry is gone,
// so a transition reported again after a restart is dropped, not re-sent,
// and a receiver that sees a key twice (a reply lost after the receiver had
// acted) can drop the repeat.
//
// # Layout
//
//	notify-outbox/<notifier>/q/<seq>      an entry; seq is 8-byte big-endian, FIFO
//	notify-outbox/<notifier>/k/<key>      'p'+seq while queued, 'd'+time once delivered, 'x'+seq once parked
//	notify-outbox/<notifier>/r/<alarm>    a reminder schedule for an unacknowledged alarm
//	notify-outbox/<notifier>/damaged/<seq> entries that could not be decoded, kept byte for byte
//	notify-outbox/<notifier>/parked/<seq>  entries refused for good, with the refusal and when (kept for KeepDelivered)
//	notify-outbox/<notifier>/last-success  time of the last successful send
//	notify-outbox/<notifier>/last-parked   time an entry was last parked
//
// Times are Unix nanoseconds on the daemon's clock. Entries, reminders and
// index values are JSON or fixed binary as noted beside their codecs.
//
// outbox knows nothing about alarms, notifier kinds or wire formats: an
// entry's payload is opaque bytes and sending is a function it is given.
package outbox
