package main

import (
	"bufio"
	"os"
	"path/filepath"
	"strings"
	"testing"
)

// TestBadInputs feeds every broken file under testdata/bad to the command
// that reads that kind of file, in-process, and asserts the error names the
// fragment testdata/bad/expect.tsv gives for it: what a user must see to
// find and fix the mistake. Every file there must have a row, and every row
// a file, so a new bad input cannot go unchecked.
func TestBadInputs(t *testing.T) {
	root := filepath.Join("..", "..", "testdata", "bad")
	f, err := os.Open(filepath.Join(root, "expect.tsv"))
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	want := map[string]string{}
	sc := bufio.NewScanner(f)
	for n := 1; sc.Scan(); n++ {
		line := sc.Text()
		if line == "" || strings.HasPrefix(line, "#") {
			continue
		}
		file, frag, ok := strings.Cut(line, "\t")
		if !ok || frag == "" {
			t.Fatalf("expect.tsv:%d: want FILE<TAB>FRAGMENT, got %q", n, line)
		}
		want[file] = frag
	}
	files, _ := filepath.Glob(filepath.Join(root, "*", "*"))
	if len(files) < 60 {
		t.Errorf("%d bad inputs, want at least 60", len(files))
	}
	for _, p := range files {
		rel, _ := filepath.Rel(root, p)
		if _, ok := want[filepath.ToSlash(rel)]; !ok {
			t.Errorf("%s has no row in expect.tsv", rel)
		}
	}
	for rel, frag := range want {
		t.Run(rel, func(t *testing.T) {
			dir := t.TempDir()
			src := filepath.Join(root, filepath.FromSlash(rel))
			b, err := os.ReadFile(src)
			if err != nil {
				t.Fatalf("expect.tsv names %s: %v", rel, err)
			}
			in := filepath.Join(dir, filepath.Base(src))
			if err := os.WriteFile(in, []byte(strings.ReplaceAll(string(b), "@DIR@", dir)), 0o600); err != nil {
				t.Fatal(err)
			}
			frag = strings.ReplaceAll(frag, "@DIR@", dir)
			var args []string
			switch kind, _, _ := strings.Cut(rel, "/"); kind {
			case "config":
				// store-dir-file names this plain file as its data directory.
				if err := os.WriteFile(filepath.Join(dir, "plain"), []byte("x"), 0o600); err != nil {
					t.Fatal(err)
				}
				args = []string{"check", "--config", in}
			case "rise":
				args = []string{"leak", "--rise", in, "--volume", "30L", "--unit", "mbar"}
			case "points":
				args = []string{"calib", "fit", "--points", in, "--model", "poly", "--quiet"}
			case "import":
				args = []string{"import", "--data", filepath.Join(dir, "data"), in}
			default:
				t.Fatalf("no command reads %s", kind)
			}
			_, stderr, err := runCmd(t, args...)
			if err == nil {
				t.Fatalf("holdfast %s succeeded; want an error with %q", strings.Join(args, " "), frag)
			}
			if got := stderr + err.Error(); !strings.Contains(got, frag) {
				t.Errorf("holdfast %s:\n%s\nlacks %q", strings.Join(args, " "), got, frag)
			}
		})
	}
}
