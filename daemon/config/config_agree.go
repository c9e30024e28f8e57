package config

import (
	"errors"
	"fmt"
	"io/fs"
	"os"
	"strings"

	"holdfast/calib"
)

// agree refuses, at check time, what the daemon's start or its loops would
// refuse or misbehave on, so a config that holdfast check passes (the
// systemd unit runs it before the daemon) does not then make holdfast run
// exit or raise false alarms. It runs after every other check, when
// defaults are filled.
func (v *checker) agree(cfg *Config) {
	v.expect(cfg.Store.FlushEvery >= 0, "store.flush_every", "must be positive, e.g. flush_every: 1s, got %s", shortDuration(cfg.Store.FlushEvery.D()))
	if fi, err := os.Stat(cfg.Store.Dir); err == nil && !fi.IsDir() {
		v.problem("store.dir", "%s is a file, not a directory; name a directory (it is made if missing), e.g. dir: /var/lib/holdfast", cfg.Store.Dir)
	}
	for _, name := range sortedKeys(cfg.Gauges) {
		if g := cfg.Gauges[name]; g != nil {
			v.expect(g.Timeout >= 0, "gauges."+name+".timeout", "must be positive (at most the interval, %s), got %s", shortDuration(g.Interval.D()), shortDuration(g.Timeout.D()))
		}
	}
	for i, a := range cfg.Alarms {
		if a != nil {
			v.agreeAlarm(fmt.Sprintf("alarms[%d]", i), a)
		}
	}
	if f := cfg.HTTP.TokenFile; f != "" && cfg.HTTP.TokenCredential == "" {
		v.tokenFile(f)
	}
}

// agreeAlarm refuses delays a gauge's polling cannot honour and limits no
// gauge can cross.
func (v *checker) agreeAlarm(path string, a *AlarmConfig) {
	g := v.cfg.Gauges[a.Gauge]
	if g != nil && (a.Resolved.Kind == "stale" || a.Resolved.Kind == "fault") {
		d, key := a.Stale.D(), "stale"
		if a.Resolved.Kind == "fault" {
			d, key = a.Fault.D(), "fault"
		}
		iv := g.Interval.D()
		// A delay at or below the poll interval is crossed between two
		// healthy polls whenever one is a little late.
		v.expect(d <= 0 || d > iv, path+"."+key, "%s is not longer than gauge %s's poll interval %s, so one late poll raises it; want at least three intervals, e.g. %s: %s",
			shortDuration(d), a.Gauge, shortDuration(iv), key, shortDuration(3*iv))
	}
	if a.Resolved.Kind != "above/below" {
		return
	}
	for _, l := range []struct {
		key string
		t   Text
		x   float64
		has bool
	}{{"above", a.Above, a.Resolved.Above, a.Resolved.HasAbove}, {"below", a.Below, a.Resolved.Below, a.Resolved.HasBelow}} {
		if !l.has {
			continue
		}
		switch {
		case underflowed(l.t.Value, l.x):
			v.problem(path+"."+l.key, "%q is too small to hold as a number (it would read as 0); give a limit above 1e-300", l.t.Value)
		case a.Resolved.Dim == calib.Pressure && l.x < 0:
			v.problem(path+"."+l.key, "%q: an absolute pressure cannot be negative; give a positive limit", l.t.Value)
		}
	}
}

// underflowed reports whether a quantity's number had non-zero digits but
// parsed to 0 (strconv.ParseFloat rounds 1e-400 to 0 without an error).
func underflowed(text string, x float64) bool {
	if x != 0 {
		return false
	}
	num, _, _ := strings.Cut(strings.TrimSpace(text), " ")
	mant, _, _ := strings.Cut(strings.ToLower(num), "e")
	return strings.ContainsAny(mant, "123456789")
}

// tokenFile checks http.token_file as the daemon's start reads it
// (readToken): holdfast check refuses a missing, empty or short token
// that New would refuse; the daemon's own load leaves that to New, whose
// message is the same. A file this user may not read is the secret check's.
func (v *checker) tokenFile(f string) {
	const p = "http.token_file"
	if _, err := ReadToken(f); v.cfg.checkOnly && err != nil && !errors.Is(err, fs.ErrPermission) {
		msg := strings.TrimPrefix(strings.TrimPrefix(err.Error(), p+" "+f+": "), p+": ")
		v.problem(p, "%s", msg)
		return
	}
	v.secretMode(p, f)
}

// secretMode refuses a secret file others may write (they could replace
// the token or key) and notes one others may read.
func (v *checker) secretMode(path, file string) {
	fi, err := os.Stat(file)
	if err != nil {
		return
	}
	m := fi.Mode().Perm()
	switch {
	case m&0o022 != 0:
		v.problem(path, "%s is writable by group or others (mode %04o), who could replace the secret; chmod 600 %s", file, m, file)
	case m&0o044 != 0:
		v.note(path, "%s is %s (mode %04o); chmod 600 %s", file, readableByOthers, m, file)
	}
}

const readableByOthers = "readable by group or others"

// SecretWarnings are the config's notes about secret files others may
// read, which holdfast run logs as warnings (holdfast check prints every
// note).
func SecretWarnings(cfg *Config) []string {
	var w []string
	for _, n := range cfg.Notes {
		if strings.Contains(n, readableByOthers) {
			w = append(w, n)
		}
	}
	return w
}
