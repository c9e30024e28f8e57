package config

import (
	"strings"
	"time"

	"holdfast/calib"
)

// AmbientConfig corrects a gauge's raw signal for its ambient temperature,
// read from a temperature gauge, before the calibration applies. The raw
// value stored is the instrument's, uncorrected.
type AmbientConfig struct {
	Gauge         string      `yaml:"gauge"`           // a temperature gauge near the sensor
	Reference     Temperature `yaml:"reference"`       // the ambient the calibration was made at
	ZeroPerKelvin float64     `yaml:"zero_per_kelvin"` // raw units per K
	SpanPerKelvin float64     `yaml:"span_per_kelvin"` // fraction per K
	MaxAge        Duration    `yaml:"max_age"`         // an older ambient reading is not used; default 1 min
}

func (v *checker) ambient(path string, g *GaugeConfig) {
	a := g.Ambient
	if a == nil {
		return
	}
	path += ".ambient"
	src, ok := v.cfg.Gauges[a.Gauge]
	switch {
	case !ok || src == nil:
		v.problem(path+".gauge", "unknown gauge %q (known temperature gauges: %s)", a.Gauge,
			strings.Join(v.gaugesWhere(func(g *GaugeConfig) bool { return g.Kind == "temperature" }), ", "))
	case src.Kind != "temperature":
		v.problem(path+".gauge", "%q measures %s; want a temperature gauge", a.Gauge, src.Kind)
	}
	v.expect(g.Kind == "pressure", path, "only pressure gauges take an ambient compensation")
	if a.MaxAge == 0 {
		a.MaxAge = Duration(time.Minute)
	}
	if ok && src != nil && src.Kind == "temperature" {
		// src's interval and timeout defaults are filled when it is checked,
		// which may come after this gauge: use what the config says, or 1s.
		need := max(src.Interval.D(), DefaultInterval) + src.Timeout.D()
		v.expect(a.MaxAge.D() >= need, path+".max_age",
			"must be at least %s (%s's interval and timeout), got %s; a shorter age makes the correction come and go", need, a.Gauge, a.MaxAge.D())
	}
	v.driverErrs(path, calib.Ambient{Reference: float64(a.Reference), Zero: a.ZeroPerKelvin, Span: a.SpanPerKelvin}.Validate())
}
