package main

import (
	"context"
	"encoding/json"
	"errors"
	"fmt"
	"io"
	"net/http"
	"os"
	"strings"
	"syscall"

	"holdfast/daemon"
	"holdfast/daemon/config"
)

func cmdReload(ctx context.Context, args []string, stdout, stderr io.Writer) error {
	fs := newFlags("reload", "[flags]\n\nAsks the running daemon to read its config file again, check it and apply\nit without a restart (as kill -HUP does): gauges, links and alarms added,\nremoved or changed (each alarm keeps its state), and shelving. Prints what\nchanged. A config with problems is not applied (they are printed as\nFILE:LINE: path: problem, exit 1); a change that needs a restart (store,\nhttp, notify, ...) is refused whole and names its keys. Needs the daemon's bearer token.", stderr)
	c := addAPIFlags(fs)
	if err := fs.Parse(args); err != nil {
		return err
	}
	if fs.NArg() > 0 {
		return errUsage("reload takes no arguments")
	}
	out, err := c.reload(ctx)
	if err != nil {
		return err
	}
	if out.Applied {
		fmt.Fprintf(stdout, "%s reloaded:\n%s\n", out.File, out.Changes)
		return nil
	}
	if len(out.Problems) > 0 { // FILE:LINE: path: problem, as check prints them
		fmt.Fprintln(stderr, (&config.ConfigError{File: out.File, Problems: out.Problems}).Error())
	}
	fmt.Fprintf(stderr, "holdfast: not reloaded: %s\n", out.Error)
	if out.Changes != "" && out.Changes != "no changes" && len(out.Problems) == 0 {
		fmt.Fprintf(stderr, "the file's changes:\n%s\n", out.Changes)
	}
	return exitError(1)
}

// reload posts to the daemon's reload endpoint; a refusal is an answer
// (Applied false), not an error.
func (c *apiClient) reload(ctx context.Context) (daemon.ReloadJSON, error) {
	var out daemon.ReloadJSON
	req, err := http.NewRequestWithContext(ctx, http.MethodPost, strings.TrimRight(c.base, "/")+"/api/v1/config/reload", nil)
	if err != nil {
		return out, fmt.Errorf("--daemon %q: %w", c.base, err)
	}
	if c.tokenFile != "" {
		tok, err := os.ReadFile(c.tokenFile)
		if err != nil {
			return out, fmt.Errorf("--token-file: %w", err)
		}
		req.Header.Set("Authorization", "Bearer "+strings.TrimSpace(string(tok)))
	}
	resp, err := c.http.Do(req)
	if err != nil {
		if errors.Is(err, syscall.ECONNREFUSED) {
			return out, fmt.Errorf("no daemon answering at %s (is holdfast run going? see --daemon)", c.base)
		}
		return out, err
	}
	defer resp.Body.Close()
	b, err := io.ReadAll(io.LimitReader(resp.Body, 1<<20))
	if err != nil {
		return out, err
	}
	if err := json.Unmarshal(b, &out); err != nil || (!out.Applied && out.Error == "") {
		var e struct{ Error string }
		if json.Unmarshal(b, &e) == nil && e.Error != "" {
			return out, fmt.Errorf("daemon: %s", e.Error) // no token, a wrong one
		}
		return out, fmt.Errorf("daemon: reload: %s", resp.Status)
	}
	return out, nil
}
