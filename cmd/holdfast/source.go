package main

import (
	"context"
	"encoding/json"
	"errors"
	"flag"
	"fmt"
	"io"
	"net"
	"net/http"
	"os"
	"strings"
	"syscall"
	"time"

	"holdfast/daemon"
	"holdfast/daemon/config"
	"holdfast/daemon/store"
)

// lockWait is how long a command waits for the store file's lock before
// deciding a daemon holds it.
const lockWait = 300 * time.Millisecond

// A source is where a reading command finds the data: the data directory
// opened read-only when no daemon holds it, else the daemon's API.
type source struct {
	dir    string
	config string
	api    *apiClient
	cfg    *config.Config
}

// addSourceFlags registers --data, --config, --daemon and --token-file.
func addSourceFlags(fs *flag.FlagSet) *source {
	s := &source{}
	fs.StringVar(&s.dir, "data", "", "data `directory` (the config's store.dir, holding holdfast.db)")
	fs.StringVar(&s.config, "config", "", "the daemon's config `file`: gives the data directory, the daemon's address and each gauge's kind")
	s.api = addAPIFlags(fs)
	return s
}

// resolve reads the config, if given, for what the flags left out.
func (s *source) resolve(fs *flag.FlagSet) error {
	if s.config == "" {
		return nil
	}
	cfg, err := config.CheckConfig(s.config)
	if err != nil {
		return fmt.Errorf("--config: %w", err)
	}
	s.cfg = cfg
	if s.dir == "" {
		s.dir = cfg.Store.Dir
	}
	set := false
	fs.Visit(func(f *flag.Flag) { set = set || f.Name == "daemon" })
	if !set {
		s.api.forConfig(cfg)
	}
	return nil
}

// loopbackFor turns a listen address into one to dial: an unspecified host
// (":9781", "0.0.0.0:9781") becomes 127.0.0.1.
func loopbackFor(listen string) string {
	host, port, err := net.SplitHostPort(listen)
	if err != nil {
		return listen
	}
	if ip := net.ParseIP(host); host == "" || ip != nil && ip.IsUnspecified() {
		host = "127.0.0.1"
	}
	return net.JoinHostPort(host, port)
}

// kinds returns each configured gauge's kind, or nil without a config.
func (s *source) kinds() map[string]string {
	if s.cfg == nil {
		return map[string]string{}
	}
	return daemon.GaugeKinds(s.cfg)
}

// openDirect opens the data directory's store read-only. It returns nil, nil
// when no directory was given or a daemon holds the file (then the caller
// asks the daemon), and says on stderr which path it took.
func (s *source) openDirect(stderr io.Writer) (*store.DB, error) {
	if s.dir == "" {
		fmt.Fprintf(stderr, "holdfast: read through the running daemon at %s (no --data or --config given)\n", s.api.base)
		return nil, nil
	}
	path := daemon.StorePath(s.dir)
	if _, err := os.Stat(path); err != nil {
		return nil, fmt.Errorf("--data %s: %w (the directory holds no store; check the path or the config's store.dir)", s.dir, err)
	}
	db, err := store.Open(path, store.Options{ReadOnly: true, Timeout: lockWait})
	if store.IsLocked(err) {
		fmt.Fprintf(stderr, "holdfast: read through the running daemon at %s (it holds %s)\n", s.api.base, s.dir)
		return nil, nil
	}
	if err != nil {
		return nil, err
	}
	fmt.Fprintf(stderr, "holdfast: read %s directly (no daemon holds it)\n", s.dir)
	return db, nil
}

// openWritable opens the data directory's store for a command that
// changes it offline, refusing while a daemon holds it.
func openWritable(dir, what string, create bool) (*store.DB, error) {
	if dir == "" {
		return nil, errUsage("%s needs --data DIR (or --config FILE)", what)
	}
	path := daemon.StorePath(dir)
	if !create {
		if _, err := os.Stat(path); err != nil {
			return nil, fmt.Errorf("--data %s: %w (the directory holds no store; check the path)", dir, err)
		}
	} else if err := os.MkdirAll(dir, 0o750); err != nil {
		return nil, fmt.Errorf("--data: %w", err)
	}
	db, err := store.Open(path, store.Options{Timeout: lockWait})
	if store.IsLocked(err) {
		return nil, fmt.Errorf("%s: a running daemon (or another holdfast command) holds %s; stop it first (e.g. systemctl stop holdfast), then run %s again", what, path, what)
	}
	return db, err
}

// stream sends a request and copies the reply's body to w as it arrives.
// A trailer named trailer, when the daemon sets it, is an error the daemon
// met after it had started the reply.
func (c *apiClient) stream(ctx context.Context, method, path, trailer string, w io.Writer) (int64, error) {
	req, err := http.NewRequestWithContext(ctx, method, strings.TrimRight(c.base, "/")+path, nil)
	if err != nil {
		return 0, fmt.Errorf("--daemon %q: %w", c.base, err)
	}
	if c.tokenFile != "" {
		tok, err := os.ReadFile(c.tokenFile)
		if err != nil {
			return 0, fmt.Errorf("--token-file: %w", err)
		}
		req.Header.Set("Authorization", "Bearer "+strings.TrimSpace(string(tok)))
	}
	hc := *c.http
	hc.Timeout = 0 // a long export or backup is not a hung one
	resp, err := hc.Do(req)
	if err != nil {
		if errors.Is(err, syscall.ECONNREFUSED) {
			return 0, fmt.Errorf("no daemon answering at %s (is holdfast run going? see --daemon)", c.base)
		}
		return 0, err
	}
	defer resp.Body.Close()
	if resp.StatusCode >= 300 {
		b, _ := io.ReadAll(io.LimitReader(resp.Body, 1<<16))
		var e struct{ Error string }
		if jsonErr := json.Unmarshal(b, &e); jsonErr == nil && e.Error != "" {
			return 0, fmt.Errorf("daemon: %s", e.Error)
		}
		return 0, fmt.Errorf("daemon: %s %s: %s", method, path, resp.Status)
	}
	n, err := io.Copy(w, resp.Body)
	if err != nil {
		return n, fmt.Errorf("daemon: reply cut short after %d bytes: %w", n, err)
	}
	if msg := resp.Trailer.Get(trailer); msg != "" {
		return n, fmt.Errorf("daemon: %s", msg)
	}
	return n, nil
}
