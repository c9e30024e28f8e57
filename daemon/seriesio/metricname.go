package seriesio

// MetricName is the metric a gauge of this kind (pressure, temperature or
// state) is exported as, in an OpenMetrics export and in remote write: the
// name the daemon's /metrics gives its live value. ok is false for a kind
// with no such metric.
func MetricName(kind string) (name string, ok bool) {
	f, ok := families[kind]
	return f.name, ok
}
