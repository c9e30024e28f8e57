package main

import (
	"context"
	"crypto/rand"
	"encoding/base64"
	"errors"
	"fmt"
	"io"
	"io/fs"
	"os"
	"path/filepath"
)

const tokenSynopsis = `new FILE [--force]

Writes a new random bearer token (32 random bytes, base64url) to FILE with
mode 0600, readable only by its owner. The daemon reads it from the
config's http.token_file and then accepts changes (alarms ack and shelve,
calibration points, hold tests) only with it; commands send it with
--token-file FILE. An existing FILE is kept unless --force is given.`

// cmdToken makes the bearer token file that guards the daemon's changes.
func cmdToken(ctx context.Context, args []string, stdout, stderr io.Writer) error {
	flags := newFlags("token", tokenSynopsis, stderr)
	force := flags.Bool("force", false, "replace FILE if it exists")
	if len(args) == 0 || args[0] != "new" {
		flags.Usage()
		if len(args) == 0 {
			return errUsage("token needs a command: token new FILE")
		}
		if args[0] == "-h" || args[0] == "--help" || args[0] == "-help" {
			return nil
		}
		return errUsage("unknown token command %q (known: new)", args[0])
	}
	path, err := parseWithName(flags, args[1:], true, "token file")
	if err != nil {
		return err
	}
	if err := writeToken(path, *force); err != nil {
		return fmt.Errorf("token: %w", err)
	}
	abs, err := filepath.Abs(path)
	if err != nil {
		abs = path
	}
	_, err = fmt.Fprintf(stdout, `wrote a new token to %s (mode 0600)
use it:
  in the config:        http: {token_file: %s}
  with each change:     holdfast alarms ack NAME --token-file %s
the daemon reads it when it starts: restart it after a new token
`, path, abs, abs)
	return err
}

// writeToken writes 32 random bytes, base64url, to path with mode 0600.
// It refuses to replace an existing file unless force.
func writeToken(path string, force bool) error {
	b := make([]byte, 32)
	if _, err := rand.Read(b); err != nil {
		return err
	}
	flag := os.O_WRONLY | os.O_CREATE | os.O_EXCL
	if force {
		flag = os.O_WRONLY | os.O_CREATE | os.O_TRUNC
	}
	f, err := os.OpenFile(path, flag, 0o600)
	switch {
	case errors.Is(err, fs.ErrExist):
		return fmt.Errorf("%s exists; keep it, or replace it with --force (the daemon and every --token-file user then need the new one)", path)
	case errors.Is(err, fs.ErrNotExist):
		return fmt.Errorf("%s: the directory %s does not exist; create it first (mkdir -p %s)", path, filepath.Dir(path), filepath.Dir(path))
	case err != nil:
		return err
	}
	// An existing file replaced with --force keeps its old mode: make it 0600.
	err = errors.Join(f.Chmod(0o600), writeAll(f, base64.RawURLEncoding.EncodeToString(b)+"\n"), f.Close())
	if err != nil {
		return fmt.Errorf("%s: %w", path, err)
	}
	return nil
}

func writeAll(w io.Writer, s string) error {
	_, err := io.WriteString(w, s)
	return err
}
