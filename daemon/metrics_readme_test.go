package daemon

import (
	"maps"
	"os"
	"path/filepath"
	"regexp"
	"slices"
	"strings"
	"testing"
	"time"

	"holdfast/daemon/seriesio"
)

// README's metric list (its "### Metrics" section) names every holdfast
// family the daemon declares and a real daemon's registry gathers, and
// nothing else; the other families the registry gathers (go_, process_,
// promhttp_) are named there by their prefix.
func TestReadmeListsEveryMetric(t *testing.T) {
	b, err := os.ReadFile(filepath.Join("..", "README.md"))
	if err != nil {
		t.Fatal(err)
	}
	_, section, ok := strings.Cut(string(b), "\n### Metrics\n")
	if !ok {
		t.Fatal(`README.md has no "### Metrics" section`)
	}
	if i := strings.Index(section, "\n#"); i >= 0 {
		section = section[:i]
	}
	listed := map[string]bool{}
	for _, m := range regexp.MustCompile("`(holdfast_[a-z0-9_]+)`").FindAllStringSubmatch(section, -1) {
		listed[m[1]] = true
	}
	want := declaredMetrics(t)
	d := scrapeDaemon(t)
	waitFor(t, 20*time.Second, "samples of every gauge", func() bool {
		text, _ := scrapeAs(t, d, textFormat)
		return strings.Count(text, "holdfast_last_sample_timestamp_seconds{") == 4
	})
	mfs, err := d.met.reg.Gather()
	if err != nil {
		t.Fatal(err)
	}
	prefixes := map[string]bool{}
	for _, mf := range mfs {
		name := mf.GetName()
		if p, _, _ := strings.Cut(name, "_"); p != "holdfast" {
			if p == "promhttp" {
				p = "promhttp_metric_handler"
			}
			prefixes[p] = true
			continue
		}
		want[name] = true
	}
	for _, name := range slices.Sorted(maps.Keys(want)) {
		if !listed[name] {
			t.Errorf("README's metric list lacks %s, which the daemon exports", name)
		}
	}
	for _, name := range slices.Sorted(maps.Keys(listed)) {
		if !want[name] {
			t.Errorf("README's metric list names %s, which the daemon does not export", name)
		}
	}
	for _, p := range slices.Sorted(maps.Keys(prefixes)) {
		if !strings.Contains(section, "`"+p+"_*`") {
			t.Errorf("README's metric list does not mention the %s_* families", p)
		}
	}
}

// An OpenMetrics export and remote write name a gauge's samples as the
// live /metrics does (seriesio.MetricName), so that backfilled or pushed
// history joins the live scrapes' series.
func TestExportNamesAreLiveNames(t *testing.T) {
	for kind, desc := range valueDescs {
		name, ok := seriesio.MetricName(kind)
		if !ok || !strings.Contains(desc.String(), `fqName: "`+name+`"`) {
			t.Errorf("kind %s: exported as %q (known %v), live as %s", kind, name, ok, desc)
		}
	}
	if len(valueDescs) != 3 {
		t.Errorf("%d value kinds, want pressure, temperature and state", len(valueDescs))
	}
}
