// Package notify tells people about alarm transitions: a webhook with an
// HMAC-SHA256 signature, an Alertmanager push, mail over SMTP with
// STARTTLS, and a local command. Each notifier sends one batch (one
// message) per call and reports whether it arrived; queueing, grouping,
// retries and reminders belong to the daemon's outbox, which calls them.
//
// notify must not poll hardware or keep state on disk. It is a monitoring
// aid's voice: it never replaces a hard-wired interlock.
package notify
