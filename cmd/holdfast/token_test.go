package main

import (
	"bytes"
	"context"
	"encoding/base64"
	"os"
	"path/filepath"
	"strings"
	"testing"
)

// "holdfast token new FILE" makes the file the README tells people to
// make: 32 random bytes, base64url, mode 0600, and says how to use it.
func TestTokenNew(t *testing.T) {
	path := filepath.Join(t.TempDir(), "token")
	var out, errOut bytes.Buffer
	if err := run(context.Background(), []string{"token", "new", path}, &out, &errOut); err != nil {
		t.Fatalf("token new: %v\n%s", err, errOut.String())
	}
	st, err := os.Stat(path)
	if err != nil {
		t.Fatal(err)
	}
	if st.Mode().Perm() != 0o600 {
		t.Errorf("mode %o, want 600", st.Mode().Perm())
	}
	first, _ := os.ReadFile(path)
	raw, err := base64.RawURLEncoding.DecodeString(strings.TrimSpace(string(first)))
	if err != nil || len(raw) != 32 {
		t.Errorf("token %q: %d bytes (%v), want 32 random bytes in base64url", first, len(raw), err)
	}
	for _, want := range []string{"token_file: ", "--token-file ", "restart"} {
		if !strings.Contains(out.String(), want) {
			t.Errorf("output lacks %q:\n%s", want, out.String())
		}
	}
	// An existing file is kept unless --force; --force also makes it 0600.
	err = run(context.Background(), []string{"token", "new", path}, &out, &errOut)
	if err == nil || !strings.Contains(err.Error(), "--force") {
		t.Errorf("second token new: %v, want a refusal naming --force", err)
	}
	if again, _ := os.ReadFile(path); !bytes.Equal(again, first) {
		t.Error("a refused token new changed the file")
	}
	os.Chmod(path, 0o644)
	if err := run(context.Background(), []string{"token", "new", path, "--force"}, &out, &errOut); err != nil {
		t.Fatal(err)
	}
	if again, _ := os.ReadFile(path); bytes.Equal(again, first) {
		t.Error("token new --force kept the old token")
	}
	if st, _ := os.Stat(path); st.Mode().Perm() != 0o600 {
		t.Errorf("after --force: mode %o, want 600", st.Mode().Perm())
	}
	err = run(context.Background(), []string{"token", "new", filepath.Join(t.TempDir(), "no", "such", "token")}, &out, &errOut)
	if err == nil || !strings.Contains(err.Error(), "mkdir -p") {
		t.Errorf("token in a missing directory: %v, want the fix named", err)
	}
}

// The calibration example names a token file in /tmp/coater-2 that a new
// user does not have: the demo makes its own instead of stopping at once.
func TestDemoMakesItsOwnTokenWithAnyConfig(t *testing.T) {
	var out, errOut bytes.Buffer
	err := run(context.Background(), []string{"demo", "--config", filepath.Join("..", "..", "deploy", "examples", "calibration.yaml"),
		"--for", "500ms", "--speed", "600", "--listen", "127.0.0.1:0"}, &out, &errOut)
	if err != nil {
		t.Fatalf("demo with the calibration example: %v\n%s", err, errOut.String())
	}
	if !strings.Contains(out.String(), "--token-file ") || strings.Contains(out.String(), "/tmp/coater-2/token") {
		t.Errorf("demo output does not name its own token:\n%s", out.String())
	}
}
