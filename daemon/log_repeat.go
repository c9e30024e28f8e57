package daemon

import (
	"context"
	"log/slog"
	"strings"
	"sync"
	"time"

	"github.com/prometheus/client_golang/prometheus"
)

// repeatEvery is how long identical error lines are held back after the
// first: one line at once, then at most one summary per interval with the
// count. A constant for now; a log.repeat_every config key could set it.
const repeatEvery = 10 * time.Second

// A repeatHandler passes every record on, except that an error record
// identical to one passed on less than repeatEvery ago is counted instead
// (in holdfast_log_errors_suppressed_total) and reported in one summary
// line ("error repeated", with message and count) when its interval ends.
// Identical means the same level, message and string-valued attributes
// (errors, names, paths), the logger's own included; numbers and times
// may differ. A full disk once gave hundreds of identical lines a second.
type repeatHandler struct {
	next   slog.Handler
	shared *repeats
	pre    string // the logger's own attributes and groups, rendered
}

// repeats is the state every logger derived from one repeatHandler shares.
type repeats struct {
	mu         sync.Mutex
	now        func() time.Time
	open       map[string]*repeatWindow
	lastSweep  time.Time
	suppressed prometheus.Counter
}

type repeatWindow struct {
	start time.Time
	n     int          // held back since start
	h     slog.Handler // the handler that passed the first on, for the summary
	level slog.Level
	msg   string
}

func newRepeatHandler(next slog.Handler, now func() time.Time) *repeatHandler {
	return &repeatHandler{next: next, shared: &repeats{now: now, open: map[string]*repeatWindow{},
		suppressed: prometheus.NewCounter(prometheus.CounterOpts{
			Name: "holdfast_log_errors_suppressed_total",
			Help: "Error log lines held back because an identical one was logged less than 10 s before; each interval's count is logged once as \"error repeated\".",
		})}}
}

func (h *repeatHandler) Enabled(ctx context.Context, l slog.Level) bool {
	return h.next.Enabled(ctx, l)
}

func (h *repeatHandler) WithAttrs(as []slog.Attr) slog.Handler {
	var b strings.Builder
	b.WriteString(h.pre)
	for _, a := range as {
		writeKeyAttr(&b, a)
	}
	return &repeatHandler{next: h.next.WithAttrs(as), shared: h.shared, pre: b.String()}
}

func (h *repeatHandler) WithGroup(name string) slog.Handler {
	return &repeatHandler{next: h.next.WithGroup(name), shared: h.shared, pre: h.pre + "[" + name + "]"}
}

func (h *repeatHandler) Handle(ctx context.Context, r slog.Record) error {
	if r.Level < slog.LevelError {
		return h.next.Handle(ctx, r)
	}
	var b strings.Builder
	b.WriteString(r.Level.String() + "\x00" + h.pre + "\x00" + r.Message + "\x00")
	r.Attrs(func(a slog.Attr) bool {
		writeKeyAttr(&b, a)
		return true
	})
	key := b.String()
	s := h.shared
	s.mu.Lock()
	now := s.now()
	due := s.sweep(now)
	w := s.open[key]
	held := w != nil
	if held {
		w.n++
		s.suppressed.Inc()
	} else {
		s.open[key] = &repeatWindow{start: now, h: h.next, level: r.Level, msg: r.Message}
	}
	s.mu.Unlock()
	summarize(ctx, due, now)
	if held {
		return nil
	}
	return h.next.Handle(ctx, r)
}

// Flush logs the summaries of the intervals that have ended; the alarm
// loop calls it every tick, so a burst that stops is still summed up.
func (h *repeatHandler) Flush() {
	s := h.shared
	s.mu.Lock()
	now := s.now()
	s.lastSweep = time.Time{}
	due := s.sweep(now)
	s.mu.Unlock()
	summarize(context.Background(), due, now)
}

// sweep removes the windows that have ended and returns those that held
// lines back; it looks at most once a second. The caller holds mu.
func (s *repeats) sweep(now time.Time) []*repeatWindow {
	if now.Sub(s.lastSweep) < time.Second {
		return nil
	}
	s.lastSweep = now
	var due []*repeatWindow
	for k, w := range s.open {
		if now.Sub(w.start) >= repeatEvery {
			delete(s.open, k)
			if w.n > 0 {
				due = append(due, w)
			}
		}
	}
	return due
}

func summarize(ctx context.Context, due []*repeatWindow, now time.Time) {
	for _, w := range due {
		r := slog.NewRecord(now, w.level, "error repeated", 0)
		r.AddAttrs(slog.String("message", w.msg), slog.Int("count", w.n),
			slog.Float64("duration_seconds", now.Sub(w.start).Seconds()))
		_ = w.h.Handle(ctx, r)
	}
}

// writeKeyAttr adds a's key, and its value when it is a string or an
// error (not a number or a time, which may differ between repeats).
func writeKeyAttr(b *strings.Builder, a slog.Attr) {
	v := a.Value.Resolve()
	b.WriteString(a.Key)
	b.WriteByte('=')
	switch v.Kind() {
	case slog.KindString:
		b.WriteString(v.String())
	case slog.KindAny:
		if err, ok := v.Any().(error); ok {
			b.WriteString(err.Error())
		}
	case slog.KindGroup:
		for _, g := range v.Group() {
			writeKeyAttr(b, g)
		}
	}
	b.WriteByte('\x00')
}
