// Package seriesio moves stored samples in and out of the store as text:
// the time syntax of queries, exports as CSV, JSON lines and OpenMetrics
// (for Prometheus' block backfilling), and the checked two-pass import of
// CSV history. It streams through store.Scan and store.Append; it must not
// know about links, drivers or alarms.
package seriesio
