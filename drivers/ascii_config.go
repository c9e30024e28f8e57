package drivers

import (
	"bytes"
	"errors"
	"fmt"
	"maps"
	"regexp"
	"slices"
	"strings"
	"time"
)

// ASCIIOptions configure the "ascii" driver: a line-based question and answer
// described entirely in config, so a new instrument needs no new code.
//
// # Exchange
//
// Steps run in order on every read. Each step sends Send (if any), then, if
// Expect is set, reads one reply up to its terminator Until (default "\n")
// and matches Expect, a Go regular expression (RE2 syntax), against the reply
// with trailing CR and LF removed. A reply that does not match is an error
// that shows the reply. A step without Expect only sends (a wake-up or a
// "continuous output off" command).
//
// Send and Until accept the escapes \r \n \t \0 \\ and \xHH (see Unescape),
// and two placeholders: {addr} becomes Address (for instruments on a shared
// RS-485 bus that prefix each command with their address; {addr} may also
// appear in Expect, where it matches the address literally) and {cs} becomes
// the checksum of the bytes before it (see Checksum).
//
// Named groups in Expect carry the data:
//
//	value   the number; forms accepted are listed at ParseNumber
//	status  a code looked up in Status
//	gauge   the channel a value belongs to, for replies carrying several
//	cs      the reply's checksum, verified over the bytes before the group
//
// A step whose Expect has no value group is a check: an acknowledge such as
// `^\x06$` before an enquiry step, or an echo of the command. A reply that
// begins with the NAK byte (\x15) is reported as the instrument refusing the
// command. A handshake instrument that answers a command with ACK and sends
// the reading only on enquiry (ENQ, \x05) is two steps; for an invented one
// that acknowledges "SNAP.<addr>" and then replies "6.5E-02|v" (value, a
// bar, a state letter):
//
//	exchange:
//	  - {send: "SNAP.{addr}\r\n", expect: '^\x06$'}
//	  - {send: "\x05", expect: '^(?P<value>[^|]+)\|(?P<status>[a-z])$'}
//
// # Status
//
// Status maps codes to ok, over-range, under-range, sensor-fault or off. It is
// looked up with the status group's text (spaces trimmed), and also with the
// value group's text when that is not a number, so an instrument that prints
// a word such as "asleep" in place of the number can be mapped too. A code missing
// from the map is an error naming the code, never a guess. A reading whose
// status is not ok keeps the number if one was printed, else its Raw is NaN.
//
// # Several gauges in one reply
//
// When a reply carries several channels, Expect is matched repeatedly over
// the reply (for instance `(?P<gauge>[a-z]):(?P<value>\S+)` over
// "a:1.2E-3 b:4.0E-6") and every match gives one reading. The readings are
// keyed by the gauge group's text; without a gauge group, by the step's Gauge
// field; without either, by their position in the exchange: "1", "2", ... The
// driver implements MultiDriver: ReadAll returns every reading of one
// exchange, and Read returns the one named by Channel (or the only one).
type ASCIIOptions struct {
	Steps    []Step
	Status   map[string]Status
	Address  string
	Checksum *Checksum // nil: no checksum
	Channel  string    // the reading Read returns when an exchange yields several
}

// A Step is one send and, optionally, one reply. See ASCIIOptions.
type Step struct {
	Send    string
	Expect  string
	Until   string        // the reply's last byte; default "\n"
	Wait    time.Duration // pause before sending, for instruments that need time between steps
	Timeout time.Duration // a shorter per-step limit than the link's; 0: the link's
	Gauge   string        // the key for this step's values when Expect has no gauge group
}

// asciiStep is a Step made ready to run.
type asciiStep struct {
	send     []byte
	csAt     int // where {cs} goes in send; -1 if nowhere
	re       *regexp.Regexp
	until    byte
	wait     time.Duration
	timeout  time.Duration
	gauge    string
	value    int // submatch indexes; -1 if absent
	status   int
	channel  int
	checksum int
}

// Validate reports every problem with the options, each naming its field as
// the config spells it (exchange[1].expect, status, checksum.kind, ...).
func (o ASCIIOptions) Validate() error {
	_, err := o.compile()
	return err
}

func (o ASCIIOptions) compile() ([]asciiStep, error) {
	var errs []error
	if len(o.Steps) == 0 {
		errs = append(errs, errors.New(`exchange: no steps; give at least one, e.g. [{send: "SHOW\r", expect: '^(?P<value>\S+)$'}]`))
	}
	addr, err := Unescape(o.Address)
	if err != nil {
		errs = append(errs, fmt.Errorf("address: %w", err))
	}
	if o.Checksum != nil {
		if err := o.Checksum.Validate(); err != nil {
			errs = append(errs, fmt.Errorf("checksum: %w", err))
		}
	}
	steps := make([]asciiStep, len(o.Steps))
	for i, s := range o.Steps {
		var stepErrs []error
		steps[i], stepErrs = o.compileStep(s, fmt.Sprintf("exchange[%d]", i), addr)
		errs = append(errs, stepErrs...)
	}
	errs = append(errs, o.checkWhole(steps)...)
	if err := errors.Join(errs...); err != nil {
		return nil, err
	}
	return steps, nil
}

func (o ASCIIOptions) compileStep(s Step, path string, addr []byte) (asciiStep, []error) {
	var errs []error
	st := asciiStep{csAt: -1, until: '\n', wait: s.Wait, timeout: s.Timeout, gauge: s.Gauge}
	send, err := Unescape(s.Send)
	if err != nil {
		errs = append(errs, fmt.Errorf("%s.send: %w", path, err))
	}
	if bytes.Contains(send, []byte("{addr}")) && len(addr) == 0 {
		errs = append(errs, fmt.Errorf("%s.send: uses {addr} but no address is set", path))
	}
	send = bytes.ReplaceAll(send, []byte("{addr}"), addr)
	if n := bytes.Count(send, []byte("{cs}")); n > 1 {
		errs = append(errs, fmt.Errorf("%s.send: {cs} appears %d times; one checksum per message", path, n))
	} else if n == 1 {
		st.csAt = bytes.Index(send, []byte("{cs}"))
		send = bytes.Replace(send, []byte("{cs}"), nil, 1)
		if o.Checksum != nil && o.Checksum.Skip > st.csAt {
			errs = append(errs, fmt.Errorf("%s.send: checksum.skip %d is past {cs} at byte %d", path, o.Checksum.Skip, st.csAt))
		}
	}
	st.send = send
	if s.Until != "" {
		u, err := Unescape(s.Until)
		if err != nil || len(u) != 1 {
			errs = append(errs, fmt.Errorf("%s.until: want exactly one byte such as \"\\n\" or \"\\r\", got %q", path, s.Until))
		} else {
			st.until = u[0]
		}
	}
	if s.Wait < 0 || s.Timeout < 0 {
		errs = append(errs, fmt.Errorf("%s: wait and timeout must not be negative", path))
	}
	if s.Expect == "" {
		if len(send) == 0 {
			errs = append(errs, fmt.Errorf("%s: neither send nor expect is set", path))
		}
		return st, errs
	}
	errs = append(errs, o.compileExpect(&st, s.Expect, path, addr)...)
	return st, errs
}

func (o ASCIIOptions) compileExpect(st *asciiStep, expect, path string, addr []byte) []error {
	if strings.Contains(expect, "{addr}") {
		if len(addr) == 0 {
			return []error{fmt.Errorf("%s.expect: uses {addr} but no address is set", path)}
		}
		expect = strings.ReplaceAll(expect, "{addr}", regexp.QuoteMeta(string(addr)))
	}
	re, err := regexp.Compile(expect)
	if err != nil {
		return []error{fmt.Errorf("%s.expect: %w", path, err)}
	}
	st.re = re
	st.value, st.status = re.SubexpIndex("value"), re.SubexpIndex("status")
	st.channel, st.checksum = re.SubexpIndex("gauge"), re.SubexpIndex("cs")
	var errs []error
	if st.status >= 0 && st.value < 0 {
		errs = append(errs, fmt.Errorf("%s.expect: has a status group but no (?P<value>...) group", path))
	}
	return errs
}

// checkWhole reports problems that only show across all steps.
func (o ASCIIOptions) checkWhole(steps []asciiStep) []error {
	var errs []error
	values, statuses, sums := 0, 0, 0
	var usesCS []string // what uses a checksum, for one problem when none is configured
	for i, st := range steps {
		if st.csAt >= 0 {
			usesCS = append(usesCS, fmt.Sprintf("exchange[%d].send sends {cs}", i))
		}
		if st.re != nil && st.checksum >= 0 {
			usesCS = append(usesCS, fmt.Sprintf("exchange[%d].expect captures (?P<cs>...)", i))
		}
		if st.re != nil && st.value >= 0 {
			values++
		}
		if st.re != nil && st.status >= 0 {
			statuses++
		}
		if st.csAt >= 0 || st.re != nil && st.checksum >= 0 {
			sums++
		}
	}
	if len(steps) > 0 && values == 0 {
		errs = append(errs, fmt.Errorf("exchange[%d].expect: regexp has no (?P<value>...) group; one step must capture the reading", len(steps)-1))
	}
	if statuses > 0 && len(o.Status) == 0 {
		errs = append(errs, errors.New(`status: the reply has a status group; map its codes, e.g. {fine: ok, low: under-range, high: over-range}`))
	}
	if o.Checksum == nil && len(usesCS) > 0 {
		// One missing setting is one problem, however many steps use it.
		first, what, _ := strings.Cut(usesCS[0], " ")
		msg := what
		for _, u := range usesCS[1:] {
			msg += ", and " + u
		}
		errs = append(errs, fmt.Errorf("%s: %s, but no checksum is configured; add one to the gauge, e.g. checksum: {kind: xor8}", first, msg))
	}
	if o.Checksum != nil && sums == 0 {
		errs = append(errs, errors.New("checksum: set, but no step sends {cs} or captures (?P<cs>...)"))
	}
	for _, code := range slices.Sorted(maps.Keys(o.Status)) {
		if s := o.Status[code]; s > StatusOff {
			errs = append(errs, fmt.Errorf("status[%q]: unknown status %d", code, s))
		}
	}
	return errs
}
