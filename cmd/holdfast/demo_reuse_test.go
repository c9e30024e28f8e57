package main

import (
	"bytes"
	"context"
	"os"
	"path/filepath"
	"strings"
	"testing"
	"time"

	"holdfast/daemon/store"
)

// A demo on a --data directory that already holds a night would write a
// second night inside the first (its clock starts at today's wall time
// again): it is refused, before the directory's token is touched (a demo
// running there keeps its token); --fresh starts over, but not while
// another demo holds the store. A negative --for is an error, not "run
// forever".
func TestDemoReusedDataDirectory(t *testing.T) {
	dir := filepath.Join(t.TempDir(), "night")
	demo := func(extra ...string) (string, error) {
		var out, errOut bytes.Buffer
		args := append([]string{"demo", "--for", "700ms", "--speed", "3000", "--listen", "127.0.0.1:0", "--data", dir}, extra...)
		ctx, cancel := context.WithTimeout(context.Background(), 30*time.Second) // a bound on a hang
		defer cancel()
		err := run(ctx, args, &out, &errOut)
		return out.String() + errOut.String(), err
	}
	if out, err := demo(); err != nil {
		t.Fatalf("first demo: %v\n%s", err, out)
	}
	token := filepath.Join(dir, "token")
	before, err := os.ReadFile(token)
	if err != nil {
		t.Fatal(err)
	}
	if _, err := demo(); err == nil || !strings.Contains(err.Error(), "already holds") || !strings.Contains(err.Error(), "--fresh") {
		t.Errorf("second demo on the same directory: %v; want a refusal that names --fresh", err)
	}
	db, err := store.Open(filepath.Join(dir, "holdfast.db"), store.Options{Timeout: time.Second})
	if err != nil {
		t.Fatal(err)
	}
	if _, err := demo("--fresh"); err == nil || !strings.Contains(err.Error(), "in use") {
		t.Errorf("--fresh while another holds the store: %v; want a refusal", err)
	}
	db.Close()
	if after, _ := os.ReadFile(token); !bytes.Equal(after, before) {
		t.Error("a refused demo rewrote the directory's token")
	}
	if out, err := demo("--fresh"); err != nil || !strings.Contains(out, "starting fresh") {
		t.Errorf("--fresh: %v\n%s", err, out)
	}
	if _, err := demo("--for", "-5s"); err == nil || !strings.Contains(err.Error(), "--for") {
		t.Errorf("--for -5s: %v; want an error", err)
	}
}
