package notify

import (
	"bytes"
	"context"
	"errors"
	"fmt"
	"os"
	"os/exec"
	"strconv"
	"strings"
	"time"
)

// DefaultExecTimeout bounds a command that was given no timeout.
const DefaultExecTimeout = 30 * time.Second

// An Exec runs a local command once per transition, with the transition
// in HOLDFAST_* environment variables (see Environ). Exit status 0 is
// delivery; anything else, or running past Timeout, is a failure to retry,
// so the command should be safe to run twice for one HOLDFAST_DEDUPE_KEY.
type Exec struct {
	Command string
	Args    []string
	Timeout time.Duration // default DefaultExecTimeout
	Env     []string      // the rest of the environment; nil passes the daemon's own
	Dir     string        // working directory; empty is the daemon's
}

// Send runs the command for each transition in order, stopping at the
// first failure (the outbox then resends the whole batch).
func (x *Exec) Send(ctx context.Context, batch []Transition) error {
	for _, t := range batch {
		if err := x.run(ctx, t); err != nil {
			return err
		}
	}
	return nil
}

func (x *Exec) run(ctx context.Context, t Transition) error {
	timeout := x.Timeout
	if timeout <= 0 {
		timeout = DefaultExecTimeout
	}
	ctx, cancel := context.WithTimeout(ctx, timeout)
	defer cancel()
	cmd := exec.CommandContext(ctx, x.Command, x.Args...)
	cmd.WaitDelay = time.Second // a child that keeps our pipes open cannot hold us
	cmd.Dir = x.Dir
	base := x.Env
	if base == nil {
		base = os.Environ()
	}
	cmd.Env = append(withoutHoldfast(base), Environ(t)...)
	var out tail
	cmd.Stdout, cmd.Stderr = &out, &out
	err := cmd.Run()
	switch {
	case err == nil:
		return nil
	case errors.Is(ctx.Err(), context.DeadlineExceeded):
		return fmt.Errorf("%s: killed after the %s timeout%s", x.Command, timeout, out.quote())
	}
	return fmt.Errorf("%s: %w%s", x.Command, err, out.quote())
}

// Environ is t as environment variables: HOLDFAST_CHAMBER, _ALARM, _GAUGE,
// _SEVERITY, _EVENT, _STATE, _VALUE, _LIMIT, _UNIT (value and limit in that
// unit, empty when not known), _MESSAGE, _AT (RFC 3339, UTC), _SINCE,
// _DEDUPE_KEY, _REMINDER (0 for the event itself), _SUMMARY and _LINK (a
// report event's URL, else empty).
func Environ(t Transition) []string {
	since := ""
	if !t.Since.IsZero() {
		since = t.Since.UTC().Format(time.RFC3339Nano)
	}
	kv := [][2]string{
		{"CHAMBER", t.Chamber}, {"ALARM", t.Alarm}, {"GAUGE", t.Gauge}, {"SEVERITY", t.Severity},
		{"EVENT", t.Event}, {"STATE", t.State}, {"VALUE", number(t.Value)}, {"LIMIT", number(t.Limit)},
		{"UNIT", t.Unit}, {"MESSAGE", t.Message}, {"AT", t.At.UTC().Format(time.RFC3339Nano)},
		{"SINCE", since}, {"DEDUPE_KEY", t.DedupeKey}, {"REMINDER", strconv.Itoa(t.Reminder)},
		{"SUMMARY", Summary(t)}, {"LINK", t.Link},
	}
	env := make([]string, len(kv))
	for i, p := range kv {
		env[i] = "HOLDFAST_" + p[0] + "=" + p[1]
	}
	return env
}

// withoutHoldfast drops inherited HOLDFAST_* variables, so the command
// sees only this transition's.
func withoutHoldfast(env []string) []string {
	out := make([]string, 0, len(env))
	for _, e := range env {
		if !strings.HasPrefix(e, "HOLDFAST_") {
			out = append(out, e)
		}
	}
	return out
}

// tail keeps the last 512 bytes a command wrote, for the error message.
type tail struct{ b []byte }

func (t *tail) Write(p []byte) (int, error) {
	t.b = append(t.b, p...)
	if len(t.b) > 512 {
		t.b = t.b[len(t.b)-512:]
	}
	return len(p), nil
}

func (t *tail) quote() string {
	s := string(bytes.TrimSpace(t.b))
	if s == "" {
		return ""
	}
	return ": output: " + strconv.Quote(s)
}
