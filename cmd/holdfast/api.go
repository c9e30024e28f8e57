package main

import (
	"bytes"
	"context"
	"encoding/json"
	"errors"
	"flag"
	"fmt"
	"io"
	"net/http"
	"os"
	"strings"
	"syscall"
	"time"

	"holdfast/daemon/config"
)

// apiClient talks to a running daemon's /api/v1/. Commands that need live
// data or change state (ack an alarm, take a calibration point) use it
// rather than opening the store, which the daemon holds.
type apiClient struct {
	base      string
	tokenFile string
	http      *http.Client
}

// addAPIFlags registers --daemon and --token-file on fs.
func addAPIFlags(fs *flag.FlagSet) *apiClient {
	c := &apiClient{http: &http.Client{Timeout: 30 * time.Second}}
	fs.StringVar(&c.base, "daemon", "http://"+config.DefaultListen, "the running daemon's `URL`")
	fs.StringVar(&c.tokenFile, "token-file", "", "`file` holding the daemon's bearer token (the config's http.token_file); needed for changes")
	return c
}

// forConfig points the client at the daemon the config describes, over
// HTTPS when http.tls is set.
func (c *apiClient) forConfig(cfg *config.Config) {
	c.base = cfg.HTTP.Scheme() + "://" + loopbackFor(cfg.HTTP.Listen)
	if t := cfg.HTTP.ClientTLS(); t != nil {
		c.http.Transport = &http.Transport{TLSClientConfig: t, Proxy: http.ProxyFromEnvironment}
	}
}

// do sends a request with an optional JSON body and decodes a JSON reply
// into out (when non-nil). Errors from the daemon carry its message.
func (c *apiClient) do(ctx context.Context, method, path string, body, out any) error {
	var rd io.Reader
	if body != nil {
		b, err := json.Marshal(body)
		if err != nil {
			return err
		}
		rd = bytes.NewReader(b)
	}
	req, err := http.NewRequestWithContext(ctx, method, strings.TrimRight(c.base, "/")+path, rd)
	if err != nil {
		return fmt.Errorf("--daemon %q: %w", c.base, err)
	}
	if body != nil {
		req.Header.Set("Content-Type", "application/json")
	}
	if c.tokenFile != "" {
		tok, err := os.ReadFile(c.tokenFile)
		if err != nil {
			return fmt.Errorf("--token-file: %w", err)
		}
		req.Header.Set("Authorization", "Bearer "+strings.TrimSpace(string(tok)))
	}
	resp, err := c.http.Do(req)
	if err != nil {
		if errors.Is(err, syscall.ECONNREFUSED) {
			return fmt.Errorf("no daemon answering at %s (is holdfast run going? see --daemon)", c.base)
		}
		return err
	}
	defer resp.Body.Close()
	b, err := io.ReadAll(io.LimitReader(resp.Body, 64<<20))
	if err != nil {
		return err
	}
	if resp.StatusCode >= 300 {
		var e struct{ Error string }
		if json.Unmarshal(b, &e) == nil && e.Error != "" {
			return fmt.Errorf("daemon: %s", e.Error)
		}
		return fmt.Errorf("daemon: %s %s: %s", method, path, resp.Status)
	}
	if out == nil {
		return nil
	}
	if err := json.Unmarshal(b, out); err != nil {
		return fmt.Errorf("daemon: %s %s: bad reply: %w", method, path, err)
	}
	return nil
}
