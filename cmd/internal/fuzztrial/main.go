// Command fuzztrial runs every fuzz target in the module, one after another,
// for a set time each, and reports which found a failure. Targets are found
// by reading the _test.go files (func FuzzX(f *testing.F)), so a new one is
// picked up without a list to keep.
//
//	go run ./cmd/internal/fuzztrial 30s           # each target for 30 s
//	go run ./cmd/internal/fuzztrial -run Chunk 2m  # only targets matching Chunk
//
// A failing input is written by go test under the package's
// testdata/fuzz/FuzzX/; the report names the file. Keep it (it becomes a
// regression case that plain go test runs) once the bug is fixed, or delete
// it. The exit status is 1 when any target failed.
package main

import (
	"bufio"
	"bytes"
	"flag"
	"fmt"
	"io"
	"io/fs"
	"os"
	"os/exec"
	"path/filepath"
	"regexp"
	"strings"
	"time"
)

// A target is one fuzz function and the package directory it lives in.
type target struct {
	dir, name string
}

var fuzzFunc = regexp.MustCompile(`^func (Fuzz\w*)\(\w+ \*testing\.F\)`)

func main() {
	run := flag.String("run", "", "only targets whose name matches this regular expression")
	parallel := flag.Int("parallel", 0, "fuzzing workers per target (0: go test's default, GOMAXPROCS)")
	flag.Usage = func() {
		fmt.Fprintf(flag.CommandLine.Output(), "usage: go run ./cmd/internal/fuzztrial [-run RE] [-parallel N] DURATION\n\n"+
			"Runs each fuzz target of the module for DURATION (e.g. 30s, 5m) and reports failures.\n\n")
		flag.PrintDefaults()
	}
	flag.Parse()
	if flag.NArg() != 1 {
		flag.Usage()
		os.Exit(2)
	}
	each, err := time.ParseDuration(flag.Arg(0))
	if err != nil || each <= 0 {
		fmt.Fprintf(os.Stderr, "fuzztrial: the time per target must be a positive duration such as 30s, got %q\n", flag.Arg(0))
		os.Exit(2)
	}
	var only *regexp.Regexp
	if *run != "" {
		if only, err = regexp.Compile(*run); err != nil {
			fmt.Fprintf(os.Stderr, "fuzztrial: -run: %v\n", err)
			os.Exit(2)
		}
	}
	targets, err := findTargets(".")
	if err != nil {
		fmt.Fprintf(os.Stderr, "fuzztrial: %v\n", err)
		os.Exit(2)
	}
	failed := 0
	ran := 0
	for _, tg := range targets {
		if only != nil && !only.MatchString(tg.name) {
			continue
		}
		ran++
		if !fuzz(os.Stdout, tg, each, *parallel) {
			failed++
		}
	}
	fmt.Printf("%d of %d fuzz targets failed (%s each)\n", failed, ran, each)
	if ran == 0 {
		fmt.Fprintln(os.Stderr, "fuzztrial: no fuzz target matched; run from the module's top directory")
		os.Exit(2)
	}
	if failed > 0 {
		os.Exit(1)
	}
}

// findTargets lists the fuzz functions of every _test.go file under root,
// in file order.
func findTargets(root string) ([]target, error) {
	var out []target
	err := filepath.WalkDir(root, func(path string, d fs.DirEntry, err error) error {
		if err != nil {
			return err
		}
		if d.IsDir() && path != root && (strings.HasPrefix(d.Name(), ".") || d.Name() == "testdata") {
			return filepath.SkipDir
		}
		if d.IsDir() || !strings.HasSuffix(path, "_test.go") {
			return nil
		}
		f, err := os.Open(path)
		if err != nil {
			return err
		}
		defer f.Close()
		sc := bufio.NewScanner(f)
		for sc.Scan() {
			if m := fuzzFunc.FindStringSubmatch(sc.Text()); m != nil {
				out = append(out, target{dir: filepath.Dir(path), name: m[1]})
			}
		}
		return sc.Err()
	})
	return out, err
}

// fuzz runs one target and reports on it; it returns false on a failure.
func fuzz(w io.Writer, tg target, each time.Duration, parallel int) bool {
	pkg := "./" + filepath.ToSlash(tg.dir)
	args := []string{"test", "-run", "^$", "-fuzz", "^" + tg.name + "$", "-fuzztime", each.String()}
	if parallel > 0 {
		args = append(args, "-parallel", fmt.Sprint(parallel))
	}
	start := time.Now()
	var out bytes.Buffer
	cmd := exec.Command("go", append(args, pkg)...)
	cmd.Stdout, cmd.Stderr = &out, &out
	err := cmd.Run()
	took := time.Since(start).Round(time.Second)
	if err == nil {
		fmt.Fprintf(w, "ok    %-22s %-20s %s%s\n", tg.name, pkg, took, execs(out.String()))
		return true
	}
	fmt.Fprintf(w, "FAIL  %-22s %-20s %s\n", tg.name, pkg, took)
	for line := range strings.Lines(out.String()) {
		if strings.Contains(line, "Failing input written to") || strings.Contains(line, "To re-run:") ||
			strings.Contains(line, "go test -run=") || strings.HasPrefix(strings.TrimSpace(line), "---") ||
			strings.Contains(line, "panic:") || strings.Contains(line, "_test.go:") {
			fmt.Fprintf(w, "      %s", line)
		}
	}
	if !strings.Contains(out.String(), "Failing input written to") {
		fmt.Fprintf(w, "      (no failing input saved: the target did not build or run)\n%s", indent(out.String()))
	}
	return false
}

// execs is go test's last progress line (elapsed time, executions and
// their rate), when it gave one.
func execs(out string) string {
	last := ""
	for line := range strings.Lines(out) {
		if _, rest, ok := strings.Cut(line, "fuzz: elapsed: "); ok && strings.Contains(rest, "execs: ") {
			last = strings.TrimSpace(rest)
		}
	}
	if last == "" {
		return ""
	}
	return " (fuzzing " + last + ")"
}

func indent(s string) string {
	var b strings.Builder
	for line := range strings.Lines(s) {
		b.WriteString("      " + line)
	}
	return b.String()
}
