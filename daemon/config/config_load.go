package config

import (
	"bytes"
	"errors"
	"fmt"
	"io"
	"os"
	"reflect"
	"regexp"
	"strconv"
	"strings"

	"gopkg.in/yaml.v3"
)

// A Problem is one thing wrong with a config file.
type Problem struct {
	Line int    `json:"line"` // 1-based; nearest enclosing key when the key is absent
	Path string `json:"path"` // gauges.foreline.interval
	Msg  string `json:"msg"`  // what is wrong and what is expected
}

// ConfigError lists every problem found in one config file.
type ConfigError struct {
	File     string
	Problems []Problem
}

func (e *ConfigError) Error() string {
	lines := make([]string, len(e.Problems))
	for i, p := range e.Problems {
		switch {
		case p.Path == "":
			lines[i] = fmt.Sprintf("%s:%d: %s", e.File, p.Line, p.Msg)
		default:
			lines[i] = fmt.Sprintf("%s:%d: %s: %s", e.File, p.Line, p.Path, p.Msg)
		}
	}
	return strings.Join(lines, "\n")
}

// LoadConfig reads and checks a config file. On any problem it returns a
// *ConfigError listing all of them.
func LoadConfig(path string) (*Config, error) { return loadConfig(path, false) }

// CheckConfig is LoadConfig for checking a config on another machine than
// the one that runs it: secret files it cannot read become Notes.
func CheckConfig(path string) (*Config, error) { return loadConfig(path, true) }

func loadConfig(path string, checkOnly bool) (*Config, error) {
	b, err := os.ReadFile(path)
	if err != nil {
		return nil, fmt.Errorf("read config: %w", err)
	}
	return parseConfig(path, b, checkOnly)
}

// ParseConfig checks config text; name is used in problems.
func ParseConfig(name string, b []byte) (*Config, error) { return parseConfig(name, b, false) }

func parseConfig(name string, b []byte, checkOnly bool) (*Config, error) {
	cfg := &Config{File: name, lines: map[string]int{}, checkOnly: checkOnly}
	fail := func(p []Problem) error { return &ConfigError{File: name, Problems: p} }

	var root yaml.Node
	dec := yaml.NewDecoder(bytes.NewReader(b))
	if err := dec.Decode(&root); err != nil {
		if errors.Is(err, io.EOF) {
			return nil, fail([]Problem{{Line: 1, Msg: "the file is empty; want a mapping with chamber, links and gauges"}})
		}
		return nil, fail([]Problem{syntaxProblem(err)})
	}
	doc := &root
	if doc.Kind == yaml.DocumentNode && len(doc.Content) == 1 {
		doc = doc.Content[0]
	}
	if doc.Kind != yaml.MappingNode {
		return nil, fail([]Problem{{Line: doc.Line, Msg: "the top level must be a mapping with chamber, links and gauges"}})
	}
	var probs []Problem
	walkKeys(doc, reflect.TypeFor[Config](), "", cfg.lines, &probs)
	duplicateKeys(doc, "", &probs)
	if err := doc.Decode(cfg); err != nil {
		var te *yaml.TypeError
		if !errors.As(err, &te) {
			return nil, fail(append(probs, Problem{Msg: err.Error()}))
		}
		vals := map[[2]int]string{}
		valuePaths(doc, "", vals)
		probs = append(probs, typeProblems(te.Errors, cfg.lines, vals, byText(doc, vals))...)
	}
	probs = check(cfg, probs)
	if len(probs) > 0 {
		sortProblems(probs)
		return nil, fail(probs)
	}
	return cfg, nil
}

var syntaxLine = regexp.MustCompile(`line (\d+)`)

func syntaxProblem(err error) Problem {
	msg := strings.TrimPrefix(err.Error(), "yaml: ")
	line := 1
	if m := syntaxLine.FindStringSubmatch(msg); m != nil {
		line, _ = strconv.Atoi(m[1])
		msg = strings.TrimSpace(strings.Replace(msg, m[0]+":", "", 1))
	}
	return Problem{Line: line, Msg: "not valid YAML: " + msg}
}

// Summary is a one-line description of a valid config.
func Summary(cfg *Config) string {
	return fmt.Sprintf("%s: ok: chamber %s (%.4g L), %d link(s), %d gauge(s), %d alarm(s)",
		cfg.File, cfg.Chamber.Name, float64(cfg.Chamber.Volume)*1000, len(cfg.Links), len(cfg.Gauges), len(cfg.Alarms))
}
