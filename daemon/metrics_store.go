package daemon

import "github.com/prometheus/client_golang/prometheus"

// storeCollector exports the sample store's own health, so a full disk or
// a damaged file is seen on the metrics stack, not only in the log.
type storeCollector struct{ d *Daemon }

var (
	descStoreWritten = prometheus.NewDesc("holdfast_store_samples_written_total",
		"Samples committed to the store.", nil, nil)
	descStoreBuffered = prometheus.NewDesc("holdfast_store_buffered_samples",
		"Samples held in memory waiting for the next flush.", nil, nil)
	descStoreDropped = prometheus.NewDesc("holdfast_store_samples_dropped_total",
		"Oldest buffered samples discarded because writes failed for so long that the buffer filled.", nil, nil)
	descStoreRejected = prometheus.NewDesc("holdfast_store_samples_rejected_total",
		"Samples the store refused (bad time or series name).", nil, nil)
	descStoreDamaged = prometheus.NewDesc("holdfast_store_damaged_chunks_total",
		"Unreadable chunks found and moved aside; the rest of the file stays readable.", nil, nil)
	descStoreFlushErrors = prometheus.NewDesc("holdfast_store_flush_errors_total",
		"Flushes that failed; their samples stayed buffered and were retried.", nil, nil)
	descStoreBytes = prometheus.NewDesc("holdfast_store_bytes",
		"Bytes of the store file in use.", nil, nil)
	descStoreFlushSeconds = prometheus.NewDesc("holdfast_store_last_flush_duration_seconds",
		"How long the last committed flush took.", nil, nil)
	descStoreMapped = prometheus.NewDesc("holdfast_store_mapped_bytes",
		"Bytes of the memory-mapped store file resident in RAM: part of process_resident_memory_bytes, apart from the Go heap (go_memory_classes_heap_objects_bytes + go_memory_classes_heap_unused_bytes). Linux only.", nil, nil)
)

func (c storeCollector) Describe(ch chan<- *prometheus.Desc) {
	for _, d := range []*prometheus.Desc{descStoreWritten, descStoreBuffered, descStoreDropped, descStoreRejected,
		descStoreDamaged, descStoreFlushErrors, descStoreBytes, descStoreFlushSeconds, descStoreMapped} {
		ch <- d
	}
}

func (c storeCollector) Collect(ch chan<- prometheus.Metric) {
	if c.d.store == nil {
		return
	}
	st := c.d.store.Stats()
	counter := func(d *prometheus.Desc, v int64) {
		ch <- prometheus.MustNewConstMetric(d, prometheus.CounterValue, float64(v))
	}
	counter(descStoreWritten, st.Written)
	counter(descStoreDropped, st.Dropped)
	counter(descStoreRejected, st.Rejected)
	counter(descStoreDamaged, st.Damaged)
	counter(descStoreFlushErrors, st.FlushErrors)
	ch <- prometheus.MustNewConstMetric(descStoreBuffered, prometheus.GaugeValue, float64(st.Buffered))
	ch <- prometheus.MustNewConstMetric(descStoreBytes, prometheus.GaugeValue, float64(st.FileBytes))
	ch <- prometheus.MustNewConstMetric(descStoreFlushSeconds, prometheus.GaugeValue, st.LastFlush.Seconds())
	if n, err := c.d.store.MappedResident(); err == nil { // not measured off Linux or on a closed store
		ch <- prometheus.MustNewConstMetric(descStoreMapped, prometheus.GaugeValue, float64(n))
	}
}
