package daemon

import (
	"strconv"

	"github.com/prometheus/client_golang/prometheus"

	"holdfast/calib"
)

// prometheusAlreadyRegistered is the error Register returns when a second
// handler() call registers the collector again.
type prometheusAlreadyRegistered = prometheus.AlreadyRegisteredError

var (
	descCalibInfo = prometheus.NewDesc("holdfast_calibration_info",
		"The calibration each pressure gauge applies: its id in the store (0: the instrument's own curve) and model. Always 1.",
		[]string{"gauge", "calibration", "model"}, nil)
	descCalibU = prometheus.NewDesc("holdfast_calibration_expanded_uncertainty_ratio",
		"Relative expanded uncertainty (k = 2) of the gauge's last valid pressure under its active calibration. Absent outside the calibrated range or without a calibration.",
		[]string{"gauge"}, nil)
)

// calibCollector exports which calibration each gauge uses and the
// uncertainty of its last value, built fresh on every scrape.
type calibCollector struct{ d *Daemon }

func (c calibCollector) Describe(ch chan<- *prometheus.Desc) {
	ch <- descCalibInfo
	ch <- descCalibU
}

func (c calibCollector) Collect(ch chan<- prometheus.Metric) {
	now := c.d.clock.Now()
	for _, g := range c.d.gauges {
		if g.virtual() || g.dim != calib.Pressure {
			continue
		}
		g.mu.Lock()
		t, id := g.transfer, g.calID
		g.mu.Unlock()
		model := "instrument"
		ext, ok := t.(calib.Extended)
		if ok && id != 0 {
			model = ext.Cal.Model
		}
		ch <- prometheus.MustNewConstMetric(descCalibInfo, prometheus.GaugeValue, 1, g.name, strconv.FormatUint(uint64(id), 10), model)
		v := g.view(now)
		if !ok || id == 0 || v.quality() != calib.QualityOK.String() {
			continue
		}
		if u, in := ext.Cal.Uncertainty.At(v.last.Value); in {
			ch <- prometheus.MustNewConstMetric(descCalibU, prometheus.GaugeValue, u, g.name)
		}
	}
}
