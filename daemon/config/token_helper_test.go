package config

import (
	"os"
	"path/filepath"
	"regexp"
	"testing"
)

var tokenFileKey = regexp.MustCompile(`token_file: [^\s}]+`)

// withToken is config file f, copied into a temporary directory with its
// http.token_file pointed at a token made there, as the example's comments
// tell a user to make one before holdfast check passes. A config naming no
// token file is returned as it is.
func withToken(t *testing.T, f string) string {
	t.Helper()
	b, err := os.ReadFile(f)
	if err != nil {
		t.Fatal(err)
	}
	if !tokenFileKey.Match(b) {
		return f
	}
	dir := t.TempDir()
	tok := filepath.Join(dir, "token")
	if err := os.WriteFile(tok, []byte("0123456789abcdef0123456789abcdef\n"), 0o600); err != nil {
		t.Fatal(err)
	}
	out := filepath.Join(dir, filepath.Base(f))
	if err := os.WriteFile(out, tokenFileKey.ReplaceAll(b, []byte("token_file: "+tok)), 0o600); err != nil {
		t.Fatal(err)
	}
	return out
}
