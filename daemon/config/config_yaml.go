package config

import (
	"fmt"
	"reflect"
	"regexp"
	"slices"
	"strconv"
	"strings"
	"time"

	"gopkg.in/yaml.v3"

	"holdfast/calib"
)

// Quantity types decode "5e-3 mbar", "30 L", "150 C" into SI. A bad value is
// reported as a *yaml.TypeError naming its line, so decoding goes on and
// every problem is reported at once.
type (
	Pressure    float64 // Pa
	Volume      float64 // m³
	Throughput  float64 // Pa·m³/s
	Temperature float64 // °C
	Speed       float64 // m³/s
	Duration    time.Duration
)

// UnmarshalYAML parses a pressure with its unit.
func (q *Pressure) UnmarshalYAML(n *yaml.Node) error {
	return decodeQ(n, calib.Pressure, (*float64)(q))
}

// UnmarshalYAML parses a volume with its unit.
func (q *Volume) UnmarshalYAML(n *yaml.Node) error { return decodeQ(n, calib.Volume, (*float64)(q)) }

// UnmarshalYAML parses a throughput (leak rate) with its unit.
func (q *Throughput) UnmarshalYAML(n *yaml.Node) error {
	return decodeQ(n, calib.Throughput, (*float64)(q))
}

// UnmarshalYAML parses a temperature with its unit.
func (q *Temperature) UnmarshalYAML(n *yaml.Node) error {
	return decodeQ(n, calib.Temperature, (*float64)(q))
}

// UnmarshalYAML parses a pumping speed with its unit.
func (q *Speed) UnmarshalYAML(n *yaml.Node) error { return decodeQ(n, calib.Speed, (*float64)(q)) }

// Percent is a share written as a percentage ("5%", "0.5 %"), held as a
// fraction (0.05).
type Percent float64

// UnmarshalYAML parses a percentage.
func (q *Percent) UnmarshalYAML(n *yaml.Node) error {
	v, ok := calib.ParsePercent(n.Value)
	if n.Kind != yaml.ScalarNode || !ok {
		return typeError(n, "want a percentage such as 5%%, got %q", n.Value)
	}
	*q = Percent(v)
	return nil
}

// UnmarshalYAML parses "1s", "250ms", "30 min" or "2d".
func (d *Duration) UnmarshalYAML(n *yaml.Node) error {
	if n.Kind != yaml.ScalarNode {
		return typeError(n, "want a duration such as 1s, 250ms or 30 min")
	}
	v, err := calib.ParseDuration(n.Value)
	if err != nil {
		return typeError(n, "%v", err)
	}
	*d = Duration(v)
	return nil
}

// D returns the duration as a time.Duration.
func (d Duration) D() time.Duration { return time.Duration(d) }

// Text is a scalar whose meaning depends on another setting (a limit is a
// pressure or a temperature by its gauge's kind); the checker parses it.
type Text struct {
	Value string
	Line  int
	Set   bool
}

// UnmarshalYAML keeps the scalar and its line.
func (t *Text) UnmarshalYAML(n *yaml.Node) error {
	if n.Kind != yaml.ScalarNode {
		return typeError(n, "want a single value such as 10 Pa")
	}
	*t = Text{Value: n.Value, Line: n.Line, Set: true}
	return nil
}

func decodeQ(n *yaml.Node, dim calib.Dimension, out *float64) error {
	if n.Kind != yaml.ScalarNode {
		return typeError(n, "want a %s with its unit", dim)
	}
	v, err := calib.Parse(n.Value, dim)
	if err != nil {
		return typeError(n, "%v", err)
	}
	*out = v
	return nil
}

func typeError(n *yaml.Node, format string, a ...any) error {
	return &yaml.TypeError{Errors: []string{fmt.Sprintf("line %d: column %d: %s", n.Line, n.Column, fmt.Sprintf(format, a...))}}
}

var unmarshalerType = reflect.TypeFor[yaml.Unmarshaler]()

// walkKeys checks n against the fields of t: unknown keys become problems
// naming the known ones, and every key's line is recorded under its path.
func walkKeys(n *yaml.Node, t reflect.Type, path string, lines map[string]int, probs *[]Problem) {
	for t.Kind() == reflect.Pointer {
		t = t.Elem()
	}
	if n.Kind == yaml.AliasNode {
		n = n.Alias
	}
	if reflect.PointerTo(t).Implements(unmarshalerType) {
		return
	}
	switch {
	case t.Kind() == reflect.Struct && n.Kind == yaml.MappingNode:
		fields := yamlFields(t)
		for i := 0; i+1 < len(n.Content); i += 2 {
			k, v := n.Content[i], n.Content[i+1]
			p := join(path, k.Value)
			lines[p] = k.Line
			f, ok := fields[k.Value]
			if !ok {
				*probs = append(*probs, Problem{Line: k.Line, Path: p,
					Msg: fmt.Sprintf("unknown key %q (known here: %s)", k.Value, strings.Join(sortedKeys(fields), ", "))})
				continue
			}
			walkKeys(v, f.Type, p, lines, probs)
		}
	case t.Kind() == reflect.Map && n.Kind == yaml.MappingNode:
		for i := 0; i+1 < len(n.Content); i += 2 {
			k, v := n.Content[i], n.Content[i+1]
			p := join(path, k.Value)
			lines[p] = k.Line
			walkKeys(v, t.Elem(), p, lines, probs)
		}
	case t.Kind() == reflect.Slice && n.Kind == yaml.SequenceNode:
		for i, v := range n.Content {
			p := fmt.Sprintf("%s[%d]", path, i)
			lines[p] = v.Line
			walkKeys(v, t.Elem(), p, lines, probs)
		}
	}
}

func yamlFields(t reflect.Type) map[string]reflect.StructField {
	m := map[string]reflect.StructField{}
	for f := range t.Fields() {
		name, _, _ := strings.Cut(f.Tag.Get("yaml"), ",")
		if name == "" || name == "-" || !f.IsExported() {
			continue
		}
		m[name] = f
	}
	return m
}

func sortedKeys[V any](m map[string]V) []string {
	ks := make([]string, 0, len(m))
	for k := range m {
		ks = append(ks, k)
	}
	slices.Sort(ks)
	return ks
}

func join(path, key string) string {
	if path == "" {
		return key
	}
	return path + "." + key
}

var (
	yamlLine   = regexp.MustCompile(`^(?:yaml: )?line (\d+): (?:column (\d+): )?(.*)$`)
	yamlUnmarh = regexp.MustCompile("cannot unmarshal !!(\\w+)(?: `([^`]*)`)? into (\\S+)")
)

// valuePaths maps the position of every value node under n to its config
// path, so a problem reported at a line and column names the right key
// even in a one-line {a: 1, b: 2} mapping.
func valuePaths(n *yaml.Node, path string, out map[[2]int]string) {
	if n.Kind == yaml.DocumentNode && len(n.Content) == 1 {
		n = n.Content[0]
	}
	out[[2]int{n.Line, n.Column}] = path
	switch n.Kind {
	case yaml.MappingNode:
		for i := 0; i+1 < len(n.Content); i += 2 {
			valuePaths(n.Content[i+1], join(path, n.Content[i].Value), out)
		}
	case yaml.SequenceNode:
		for i, v := range n.Content {
			valuePaths(v, fmt.Sprintf("%s[%d]", path, i), out)
		}
	}
}

// byText maps "line\x00scalar text" to the paths of the scalars with that
// text on that line, from the positions valuePaths recorded.
func byText(doc *yaml.Node, vals map[[2]int]string) map[string][]string {
	out := map[string][]string{}
	var walk func(n *yaml.Node)
	walk = func(n *yaml.Node) {
		if n.Kind == yaml.ScalarNode {
			if p, ok := vals[[2]int{n.Line, n.Column}]; ok {
				k := strconv.Itoa(n.Line) + "\x00" + n.Value
				out[k] = append(out[k], p)
			}
		}
		for _, c := range n.Content {
			walk(c)
		}
	}
	walk(doc)
	return out
}

// typeProblems turns yaml.v3's "line N: ..." messages into problems. A
// message with a column (our own quantity types give one) names the exact
// key; so does one quoting a value found once on its line; otherwise it
// names the keys' common parent on that line, never a guess between siblings.
func typeProblems(msgs []string, lines map[string]int, vals map[[2]int]string, texts map[string][]string) []Problem {
	byLine := map[int][]string{}
	for p, l := range lines {
		byLine[l] = append(byLine[l], p)
	}
	var probs []Problem
	for _, m := range msgs {
		sm := yamlLine.FindStringSubmatch(m)
		if sm == nil {
			probs = append(probs, Problem{Msg: m})
			continue
		}
		line, _ := strconv.Atoi(sm[1])
		path := commonParent(byLine[line])
		if sm[2] != "" {
			col, _ := strconv.Atoi(sm[2])
			if p, ok := vals[[2]int{line, col}]; ok {
				path = p
			}
		} else if um := yamlUnmarh.FindStringSubmatch(sm[3]); um != nil && um[2] != "" {
			if ps := texts[strconv.Itoa(line)+"\x00"+um[2]]; len(ps) == 1 {
				path = ps[0]
			}
		}
		probs = append(probs, Problem{Line: line, Path: path, Msg: plainTypeError(sm[3])})
	}
	return probs
}

// commonParent is the longest path that is, or is a parent of, every path in ps.
func commonParent(ps []string) string {
	if len(ps) == 0 {
		return ""
	}
	common := ps[0]
	for _, p := range ps[1:] {
		for common != "" && p != common && !strings.HasPrefix(p, common+".") && !strings.HasPrefix(p, common+"[") {
			i := strings.LastIndexAny(common, ".[")
			if i < 0 {
				i = 0
			}
			common = common[:i]
		}
	}
	return common
}

// plainTypeError rewords yaml.v3's "cannot unmarshal !!seq `[a, b]` into
// daemon.GaugeConfig" for people who write YAML, not Go.
func plainTypeError(msg string) string {
	sm := yamlUnmarh.FindStringSubmatch(msg)
	if sm == nil {
		return msg
	}
	got := map[string]string{"seq": "a list", "map": "a mapping", "str": "text", "int": "a number",
		"float": "a number", "bool": "true or false", "null": "nothing"}[sm[1]]
	if got == "" {
		got = sm[1]
	}
	if sm[2] != "" && sm[1] != "seq" && sm[1] != "map" {
		got += " (" + sm[2] + ")"
	}
	want := sm[3]
	switch {
	case strings.HasPrefix(want, "[]"):
		want = "a list"
	case strings.HasPrefix(want, "map["):
		want = "a mapping of names to settings"
	case strings.Contains(want, "daemon.") || strings.HasPrefix(want, "*"):
		want = "a mapping of settings"
	case strings.HasPrefix(want, "int") || strings.HasPrefix(want, "uint"):
		want = "a whole number"
	case strings.HasPrefix(want, "float"):
		want = "a number"
	case want == "string":
		want = "a single value (text)"
	case want == "bool":
		want = "true or false"
	}
	return "got " + got + "; want " + want
}
