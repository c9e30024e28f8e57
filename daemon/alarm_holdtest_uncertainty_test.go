package daemon

import (
	"math"
	"strings"
	"testing"
	"time"

	"holdfast/calib"
	"holdfast/daemon/config"
	"holdfast/drivers/sim"
)

// A hold test's interval names what it takes in. With a calibration stating
// 1.2 % (k = 2) over the record's pressures the scale's standard
// uncertainty is 1.2 % / 2 = 0.6 %; the larger of the two ends counts (the
// range above 1 Pa states 3 %, so a record reaching 2 Pa takes 1.5 %); a
// chamber.volume_uncertainty of 5 % (k = 2) is 2.5 % standard. Without a
// calibration, or outside its ranges, the note says the scale is left out.
func TestRiseUncertaintiesNameTheirSources(t *testing.T) {
	text := strings.NewReplacer(", token_file: TOKEN", "", "DIR", t.TempDir(), "LEAK", "1e-9 Pa*m3/s", "OUTGAS", "1e-12 Pa*m3/s").Replace(holdConfig)
	cfg, err := config.ParseConfig("u.yaml", []byte(text))
	if err != nil {
		t.Fatal(err)
	}
	if got := float64(cfg.Chamber.VolumeUncertainty); math.Abs(got-0.05) > 1e-12 {
		t.Fatalf("volume_uncertainty: 5%% read as %g, want 0.05", got)
	}
	d, err := New(cfg, Options{Clock: sim.NewClock(time.Now(), 1)})
	if err != nil {
		t.Fatal(err)
	}
	defer d.closeAll()

	opt, note := d.riseUncertainties("ion", []float64{1e-3, 2e-3})
	if opt.ScaleUncertainty != 0 || math.Abs(opt.VolumeUncertainty-0.025) > 1e-12 {
		t.Errorf("no calibration: options %+v, want scale 0 and volume 0.025", opt)
	}
	if !strings.Contains(note, "leaves out the gauge's scale (no calibration is active") || !strings.Contains(note, "the volume (chamber.volume_uncertainty: 5 %") {
		t.Errorf("note %q", note)
	}

	cal := &calib.Calibration{Uncertainty: calib.Uncertainty{K: 2, Ranges: []calib.UncertaintyRange{
		{From: 1e-4, To: 1, Expanded: 0.012}, {From: 1, To: 10, Expanded: 0.03}, {From: 10, To: 100, Expanded: 1.5}}}}
	d.gaugeNamed("ion").setTransfer(calib.Extended{Cal: cal}, 7)
	for _, c := range []struct {
		ps    []float64
		scale float64
		says  string
	}{
		{[]float64{1e-3, 2e-3}, 0.006, "the gauge's scale (its calibration: 1.2 % at k = 2)"},
		{[]float64{0.5, 2}, 0.015, "the gauge's scale (its calibration: 3 % at k = 2)"},
		{[]float64{1e-5, 1e-3}, 0, "calibration 7 states no uncertainty at 1e-05 Pa"},
		{[]float64{20, 30}, 0, "calibration 7 states 150 % at k = 2 at these pressures, too coarse"},
	} {
		opt, note := d.riseUncertainties("ion", c.ps)
		if math.Abs(opt.ScaleUncertainty-c.scale) > 1e-12 || !strings.Contains(note, c.says) {
			t.Errorf("pressures %v: scale %g, note %q; want %g and %q", c.ps, opt.ScaleUncertainty, note, c.scale, c.says)
		}
	}
}
