package seriesio

import (
	"slices"
	"strings"
	"testing"
)

func TestPickGauges(t *testing.T) {
	known := []string{"wall-tc", "chamber-cdg", "foreline", "chamber-cdg"}
	for _, c := range []struct {
		asked []string
		want  []string
		err   string
	}{
		{[]string{"foreline"}, []string{"foreline"}, ""},
		{[]string{"wall-tc,foreline", "foreline"}, []string{"foreline", "wall-tc"}, ""},
		{[]string{"all"}, []string{"chamber-cdg", "foreline", "wall-tc"}, ""},
		{[]string{"forline"}, nil, `gauge "forline": no such gauge or stored series (known: chamber-cdg, foreline, wall-tc)`},
		{nil, nil, "gauge: missing"},
	} {
		got, err := PickGauges(c.asked, known)
		if c.err != "" {
			if err == nil || !strings.Contains(err.Error(), c.err) {
				t.Errorf("PickGauges(%q): err %v, want %q", c.asked, err, c.err)
			}
			continue
		}
		if err != nil || !slices.Equal(got, c.want) {
			t.Errorf("PickGauges(%q) = %q, %v; want %q", c.asked, got, err, c.want)
		}
	}
	if _, err := PickGauges([]string{"all"}, nil); err == nil || !strings.Contains(err.Error(), "no series yet") {
		t.Errorf("PickGauges on an empty store: err %v, want 'no series yet'", err)
	}
}
