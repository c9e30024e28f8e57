package main

import (
	"bufio"
	"context"
	"encoding/json"
	"errors"
	"fmt"
	"io"
	"net/http"
	"os"
	"path/filepath"
	"strconv"
	"strings"
	"testing"

	"holdfast/daemon"
	"holdfast/daemon/config"
	"holdfast/drivers"
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
	addr, tok := badInputsDaemon(t)
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
			kind, _, _ := strings.Cut(rel, "/")
			switch kind {
			case "replies", "api":
				var err error
				if kind == "api" {
					err = postBody(addr, tok, filepath.Base(src), b)
				} else {
					err = parseReply(filepath.Base(src), string(b))
				}
				if err == nil || !strings.Contains(err.Error(), frag) {
					t.Errorf("%s: got %v, want an error with %q", rel, err, frag)
				}
				return
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

// parseReply runs the drivers' parser for one instrument reply: a .scpi
// file holds one numeric reply field; a .regs file holds a register type
// and the registers read, in hex ("float32 7FC0 0000").
func parseReply(name, text string) error {
	if strings.HasSuffix(name, ".scpi") {
		_, err := drivers.ParseSCPINumber(text)
		return err
	}
	f := strings.Fields(text)
	if len(f) == 0 {
		return errors.New("empty register file")
	}
	var regs []uint16
	for _, w := range f[1:] {
		r, err := strconv.ParseUint(w, 16, 16)
		if err != nil {
			return err
		}
		regs = append(regs, uint16(r))
	}
	_, err := drivers.DecodeRegisters(regs, f[0], false)
	return err
}

// postBody sends a request body to the endpoint its file names
// ("calibrations-points--unknown-field.json" goes to
// /api/v1/calibrations/points) and returns the daemon's refusal.
func postBody(addr, tok, name string, body []byte) error {
	ep, _, _ := strings.Cut(name, "--")
	req, err := http.NewRequest("POST", "http://"+addr+"/api/v1/"+strings.ReplaceAll(ep, "-", "/"), strings.NewReader(string(body)))
	if err != nil {
		return err
	}
	req.Header.Set("Authorization", "Bearer "+tok)
	req.Header.Set("Content-Type", "application/json")
	resp, err := http.DefaultClient.Do(req)
	if err != nil {
		return err
	}
	defer resp.Body.Close()
	b, _ := io.ReadAll(resp.Body)
	var e struct{ Error string }
	if resp.StatusCode != http.StatusBadRequest || json.Unmarshal(b, &e) != nil || e.Error == "" {
		return fmt.Errorf("status %d, want 400 with an error: %s", resp.StatusCode, b)
	}
	return errors.New(e.Error)
}

// badInputsDaemon starts the calibration bench daemon on 127.0.0.1 for the
// API bodies, stopped when the test ends.
func badInputsDaemon(t *testing.T) (addr, token string) {
	dir := t.TempDir()
	tok := filepath.Join(dir, "token")
	token = "bad-inputs-token-0123456789"
	if err := os.WriteFile(tok, []byte(token), 0o600); err != nil {
		t.Fatal(err)
	}
	cfg, err := config.ParseConfig("bench.yaml", []byte(strings.NewReplacer("DIR", dir, "TOKEN", tok).Replace(cmdLiveConfig)))
	if err != nil {
		t.Fatal(err)
	}
	d, err := daemon.New(cfg, daemon.Options{})
	if err != nil {
		t.Fatal(err)
	}
	ctx, cancel := context.WithCancel(context.Background())
	done := make(chan error, 1)
	go func() { done <- d.Run(ctx) }()
	t.Cleanup(func() { cancel(); <-done })
	return d.Addr(), token
}
