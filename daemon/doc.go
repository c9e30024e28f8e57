// Package daemon is the running service: it builds links, gauges and alarms
// from a checked daemon/config.Config, runs one poller per link, turns
// readings into samples through each gauge's transfer, hands them to the
// store, the metrics and the alarms, and serves HTTP (/metrics, /healthz,
// /api/v1/).
//
// daemon holds no config checks (they live in daemon/config) and must not
// speak a wire protocol: framing and parsing live in drivers.
package daemon
