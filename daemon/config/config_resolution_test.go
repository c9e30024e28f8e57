package config

import (
	"strings"
	"testing"
	"time"
)

func TestStoreResolutionIsChecked(t *testing.T) {
	base := "chamber: {name: res, volume: 10 L}\nlinks:\n  sim: {simulator: {rough_pump: {speed: 2 m3/h}}}\n" +
		"gauges:\n  p1: {link: sim, driver: sim, instrument: pirani, kind: pressure, interval: 2s}\n"
	for _, c := range []struct {
		res  string
		want time.Duration // 0: refused
	}{{"", 0 /* unset: the store's default */}, {"1ms", time.Millisecond}, {"100us", 100 * time.Microsecond},
		{"1s", time.Second}, {"3ms", -1}, {"2s", -1}, {"0.3ms", -1}} {
		yaml := base + "store: {dir: /tmp/holdfast-res}\n"
		if c.res != "" {
			yaml = base + "store: {dir: /tmp/holdfast-res, resolution: " + c.res + "}\n"
		}
		cfg, err := ParseConfig("res.yaml", []byte(yaml))
		switch {
		case c.want < 0 && (err == nil || !strings.Contains(err.Error(), "res.yaml:6: store.resolution: want a time step that divides 1s")):
			t.Errorf("resolution %q: got %v, want a problem naming store.resolution on line 6", c.res, err)
		case c.want >= 0 && err != nil:
			t.Errorf("resolution %q: %v", c.res, err)
		case c.want >= 0 && cfg.Store.Resolution.D() != c.want:
			t.Errorf("resolution %q: got %s, want %s", c.res, cfg.Store.Resolution.D(), c.want)
		}
	}
}
