package daemon

import (
	"fmt"
	"math"
	"regexp"
	"slices"
	"strconv"
	"strings"
	"testing"
)

// checkOpenMetrics checks an OpenMetrics 1.0 text exposition the way a
// strict parser reads it and returns every problem, each naming its line.
// The rules, from the OpenMetrics 1.0 specification (prometheus/docs,
// docs/specs/om/open_metrics_spec.md):
//   - MetricFamily names MUST be unique within a MetricSet, and a family's
//     name MUST NOT result in a potential clash of sample names with another
//     family (the spec's example: a gauge foo_created beside a counter foo);
//   - a family has at most one TYPE, UNIT and HELP line, before its samples,
//     and families are not interleaved;
//   - each sample's name is the family's name with the suffix its type
//     allows (counter: _total, _created; histogram: _bucket, _count, _sum,
//     _created; …); a UNIT is the suffix of the family name;
//   - a Metric's LabelSet is unique within its family; a counter's total is
//     not negative or NaN; a histogram has a +Inf bucket;
//   - the exposition ends with "# EOF".
func checkOpenMetrics(text string) []error {
	c := omChecker{families: map[string]*omFamily{}, owner: map[string]string{}}
	body, ok := strings.CutSuffix(text, "# EOF\n")
	if !ok {
		c.errorf(0, `the exposition does not end with "# EOF" and a newline`)
	}
	for i, line := range strings.Split(strings.TrimSuffix(body, "\n"), "\n") {
		c.line(i+1, line)
	}
	c.finish()
	return c.errs
}

type omFamily struct {
	name, typ string
	meta      map[string]bool // TYPE, UNIT, HELP seen
	samples   bool
	series    map[string]bool // sample name and labels, to find duplicates
	infBucket map[string]bool // histogram label sets (without le) with an le="+Inf" bucket
	buckets   map[string]bool // histogram label sets with any bucket
}

type omChecker struct {
	families map[string]*omFamily
	owner    map[string]string // potential sample name → family that may write it
	cur      *omFamily
	errs     []error
}

func (c *omChecker) errorf(line int, format string, args ...any) {
	c.errs = append(c.errs, fmt.Errorf("openmetrics line %d: %s", line, fmt.Sprintf(format, args...)))
}

// omSuffixes are the sample-name suffixes each type may write (OpenMetrics
// 1.0, "Metric types" and the text format's ABNF).
var omSuffixes = map[string][]string{
	"counter": {"_total", "_created"}, "gauge": {""}, "unknown": {""}, "stateset": {""}, "info": {"_info"},
	"histogram": {"_bucket", "_count", "_sum", "_created"}, "gaugehistogram": {"_gbucket", "_gcount", "_gsum"},
	"summary": {"", "_count", "_sum", "_created"},
}

var (
	omName  = regexp.MustCompile(`^[a-zA-Z_:][a-zA-Z0-9_:]*$`)
	omLabel = regexp.MustCompile(`^[a-zA-Z_][a-zA-Z0-9_]*$`)
)

func (c *omChecker) line(n int, line string) {
	if rest, ok := strings.CutPrefix(line, "# "); ok {
		c.meta(n, rest)
		return
	}
	if line == "" || strings.HasPrefix(line, "#") {
		c.errorf(n, "%q: neither a sample nor a TYPE, UNIT or HELP line", line)
		return
	}
	c.sample(n, line)
}

func (c *omChecker) meta(n int, rest string) {
	kind, rest, _ := strings.Cut(rest, " ")
	name, arg, _ := strings.Cut(rest, " ")
	if kind != "TYPE" && kind != "UNIT" && kind != "HELP" {
		c.errorf(n, "unknown metadata %q", kind)
		return
	}
	if !omName.MatchString(name) {
		c.errorf(n, "family name %q is not valid", name)
		return
	}
	f := c.families[name]
	switch {
	case f == nil:
		f = &omFamily{name: name, typ: "unknown", meta: map[string]bool{}, series: map[string]bool{}, infBucket: map[string]bool{}, buckets: map[string]bool{}}
		c.families[name] = f
	case f != c.cur || f.samples:
		c.errorf(n, "family %s declared again (a family name must be unique, its metadata before its samples)", name)
	}
	if f.meta[kind] {
		c.errorf(n, "family %s has a second %s line", name, kind)
	}
	f.meta[kind] = true
	c.cur = f
	switch kind {
	case "TYPE":
		if _, ok := omSuffixes[arg]; !ok {
			c.errorf(n, "family %s: unknown type %q", name, arg)
			return
		}
		f.typ = arg
		for _, s := range omSuffixes[arg] {
			if other, ok := c.owner[name+s]; ok && other != name {
				c.errorf(n, "family %s (%s) may write samples named %s, as family %s may: a name clash", name, arg, name+s, other)
			}
			c.owner[name+s] = name
		}
	case "UNIT":
		if arg != "" && !strings.HasSuffix(name, "_"+arg) {
			c.errorf(n, "family %s: unit %q is not the suffix of its name", name, arg)
		}
	}
}

func (c *omChecker) sample(n int, line string) {
	name, labels, value, err := parseOMSample(line)
	if err != nil {
		c.errorf(n, "%q: %v", line, err)
		return
	}
	f := c.cur
	if f == nil || !slices.Contains(omSuffixes[f.typ], strings.TrimPrefix(name, f.name)) || !strings.HasPrefix(name, f.name) {
		c.errorf(n, "sample %s does not belong to the family declared before it", name)
		return
	}
	if !f.meta["TYPE"] {
		c.errorf(n, "family %s has samples but no TYPE", f.name)
		f.meta["TYPE"] = true // once
	}
	f.samples = true
	key := name + "{" + strings.Join(labels, ",") + "}"
	if f.series[key] {
		c.errorf(n, "sample %s appears twice in family %s", key, f.name)
	}
	f.series[key] = true
	suffix := strings.TrimPrefix(name, f.name)
	switch {
	case f.typ == "counter" && suffix == "_total" && (value < 0 || math.IsNaN(value)):
		c.errorf(n, "counter %s: total %g is negative or NaN", key, value)
	case f.typ == "histogram" && suffix == "_bucket":
		var rest []string
		le := ""
		for _, l := range labels {
			if v, ok := strings.CutPrefix(l, "le="); ok {
				le = v
			} else {
				rest = append(rest, l)
			}
		}
		set := strings.Join(rest, ",")
		f.buckets[set] = true
		if le == `"+Inf"` {
			f.infBucket[set] = true
		}
		if le == "" {
			c.errorf(n, "histogram bucket %s has no le label", key)
		}
	}
}

// finish checks what needs the whole exposition: every histogram's label
// sets have a +Inf bucket.
func (c *omChecker) finish() {
	for _, f := range c.families {
		for set := range f.buckets {
			if !f.infBucket[set] {
				c.errorf(0, "histogram %s{%s} has no le=\"+Inf\" bucket", f.name, set)
			}
		}
	}
}

// parseOMSample splits `name{l="v",...} value [timestamp]` and returns the
// labels as written (name="escaped value"), sorted.
func parseOMSample(line string) (name string, labels []string, value float64, err error) {
	i := strings.IndexAny(line, "{ ")
	if i < 0 {
		return "", nil, 0, fmt.Errorf("no value")
	}
	name, rest := line[:i], line[i:]
	if !omName.MatchString(name) {
		return "", nil, 0, fmt.Errorf("metric name %q is not valid", name)
	}
	if strings.HasPrefix(rest, "{") {
		rest = rest[1:]
		for !strings.HasPrefix(rest, "}") {
			ln, after, ok := strings.Cut(rest, `="`)
			if !ok || !omLabel.MatchString(ln) {
				return "", nil, 0, fmt.Errorf("bad label near %q", rest)
			}
			j := 0
			for j < len(after) && after[j] != '"' {
				if after[j] == '\\' {
					if j+1 >= len(after) || !strings.ContainsRune(`\"n`, rune(after[j+1])) {
						return "", nil, 0, fmt.Errorf("label %s: bad escape", ln)
					}
					j++
				}
				j++
			}
			if j >= len(after) {
				return "", nil, 0, fmt.Errorf("label %s: unterminated value", ln)
			}
			labels = append(labels, ln+`="`+after[:j]+`"`)
			rest = after[j+1:]
			if r, ok := strings.CutPrefix(rest, ","); ok {
				rest = r
			} else if !strings.HasPrefix(rest, "}") {
				return "", nil, 0, fmt.Errorf("label %s: want , or } after its value", ln)
			}
		}
		rest = rest[1:]
	}
	fields := strings.Fields(rest)
	if len(fields) < 1 || !strings.HasPrefix(rest, " ") {
		return "", nil, 0, fmt.Errorf("want one space and a value after the name and labels")
	}
	if len(fields) > 2 && fields[2] != "#" {
		return "", nil, 0, fmt.Errorf("unexpected %q after the value and timestamp", fields[2])
	}
	value, err = strconv.ParseFloat(fields[0], 64)
	if err != nil {
		return "", nil, 0, fmt.Errorf("value %q is not a number", fields[0])
	}
	slices.Sort(labels)
	return name, labels, value, nil
}

// The checker itself, on expositions written by hand from the OpenMetrics
// 1.0 specification's rules: a good one passes; each bad one is caught.
func TestCheckOpenMetrics(t *testing.T) {
	good := "# TYPE app_polls counter\n# HELP app_polls Polls.\napp_polls_total{gauge=\"a\"} 3\napp_polls_created{gauge=\"a\"} 1.7e9\n" +
		"# TYPE app_pressure_pascals gauge\n# UNIT app_pressure_pascals pascals\napp_pressure_pascals{gauge=\"a \\\"x\\\"\"} 2.5e-3\n" +
		"# TYPE app_wait_seconds histogram\napp_wait_seconds_bucket{le=\"0.1\"} 1\napp_wait_seconds_bucket{le=\"+Inf\"} 2\napp_wait_seconds_count 2\napp_wait_seconds_sum 0.3\n" +
		"# EOF\n"
	if errs := checkOpenMetrics(good); len(errs) > 0 {
		t.Errorf("a valid exposition: %v", errs)
	}
	for _, c := range []struct{ name, text, want string }{
		// The Go collector's memstats pair, as client_golang writes it by default.
		{"gauge and counter of one name", "# TYPE go_memstats_alloc_bytes gauge\ngo_memstats_alloc_bytes 1024\n# TYPE go_memstats_alloc_bytes counter\ngo_memstats_alloc_bytes_total 4096\n# EOF\n", "declared again"},
		{"gauge named like a counter's sample", "# TYPE foo counter\nfoo_total 1\n# TYPE foo_created gauge\nfoo_created 2\n# EOF\n", "name clash"},
		{"no EOF", "# TYPE foo gauge\nfoo 1\n", "# EOF"},
		{"interleaved", "# TYPE a gauge\na 1\n# TYPE b gauge\nb 1\na{x=\"1\"} 2\n# EOF\n", "does not belong"},
		{"counter without _total", "# TYPE foo counter\nfoo 1\n# EOF\n", "does not belong"},
		{"unit not a suffix", "# TYPE foo_bytes gauge\n# UNIT foo_bytes seconds\nfoo_bytes 1\n# EOF\n", "not the suffix"},
		{"duplicate series", "# TYPE foo gauge\nfoo{a=\"1\",b=\"2\"} 1\nfoo{b=\"2\",a=\"1\"} 2\n# EOF\n", "twice"},
		{"negative counter", "# TYPE foo counter\nfoo_total -1\n# EOF\n", "negative"},
		{"no +Inf bucket", "# TYPE h histogram\nh_bucket{le=\"1\"} 1\nh_count 1\nh_sum 1\n# EOF\n", "+Inf"},
		{"bad value", "# TYPE foo gauge\nfoo one\n# EOF\n", "not a number"},
		{"blank line", "# TYPE foo gauge\n\nfoo 1\n# EOF\n", "neither"},
	} {
		errs := checkOpenMetrics(c.text)
		if !strings.Contains(fmt.Sprint(errs), c.want) {
			t.Errorf("%s: problems %v; want one saying %q", c.name, errs, c.want)
		}
	}
}
