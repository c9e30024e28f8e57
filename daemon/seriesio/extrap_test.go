package seriesio

import "testing"

// The quality extrapolated (stored as 5, after off) reads back by name.
func TestQualityExtrapolatedRoundTrip(t *testing.T) {
	if got := formatQuality(5); got != "extrapolated" {
		t.Errorf("formatQuality(5) = %q, want extrapolated", got)
	}
	if q, err := parseQuality("extrapolated"); err != nil || q != 5 {
		t.Errorf("parseQuality(extrapolated) = %d, %v; want 5", q, err)
	}
}
