package daemon

import (
	"log/slog"

	"holdfast/calib"
)

// combined checks a virtual gauge's config. Virtual gauges are not built
// yet, so any is refused.
func (v *checker) combined(name string, g *GaugeConfig) {
	v.problem("gauges."+name+".combine", "combined gauges are not available yet")
}

// buildCombined builds the virtual gauges. There are none yet.
func (d *Daemon) buildCombined() error { return nil }

// combineAfter updates the virtual gauges that g feeds after its sample s.
func (d *Daemon) combineAfter(log *slog.Logger, g *gauge, s calib.Sample) {}
