// Package daemon is the service: it loads and checks the YAML config, runs
// one poller per link, turns readings into samples through each gauge's
// transfer, hands them to the store, the metrics and the alarms, and serves
// HTTP (/metrics, /healthz, /api/v1/).
//
// daemon must not speak a wire protocol: framing and parsing live in drivers.
package daemon
