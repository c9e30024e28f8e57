package sim

import (
	"bufio"
	"bytes"
	"fmt"
	"io"
	"strconv"
	"strings"

	"holdfast/drivers"
)

// The ASCII protocol's state words, the last field of a reading.
var asciiState = map[drivers.Status]string{
	drivers.StatusOK: "GOOD", drivers.StatusUnderRange: "BELOW", drivers.StatusOverRange: "ABOVE",
	drivers.StatusSensorFault: "FAULT", drivers.StatusOff: "IDLE",
}

// The reasons a request is refused, the word after REFUSED.
const (
	refuseUnknown  = "unknown-command" // not a command of this protocol
	refuseChannel  = "no-such-channel" // the channel is missing or not served
	refuseChecksum = "bad-checksum"    // the checksum is missing or wrong
	refuseTooLong  = "too-long"        // longer than maxRequest before its terminator
)

const (
	maxRequest = 64 // bytes of one request, terminator excluded
	refused    = "REFUSED "
	sumMark    = " ~" // what stands before a checksum's two hex digits
)

// ServeASCII answers requests arriving on rw (the master side of a
// pseudo-terminal, say) in holdfast's own simulator protocol until rw fails,
// typically because its owner closed it.
//
// A request is a line ended by CR (an LF, or an LF after the CR, also ends
// it; empty lines are ignored); its words are separated by single spaces
// and are upper case. A reply is a line ended by CR LF:
//
//	request  [TO <addr> ]<command>[ ~<cs>]
//	reply    [FROM <addr> ]<body>[ ~<cs>]
//
// Commands and their reply bodies:
//
//	READ <n>    channel n's reading:    CH<n> <value> <unit> <state>         CH1 1.23E-04 mbar GOOD
//	READ ALL    every channel:          the same, joined by " | "            CH1 9.87E+02 mbar GOOD | CH2 2.20E+01 C GOOD
//	INFO <n>    what channel n is:      CH<n> <name> <kind> <unit>           CH3 rough pirani mbar
//	CHANNELS    how many channels:      CHANNELS <count>                     CHANNELS 4
//
// The state is GOOD (ok), BELOW (under-range), ABOVE (over-range), FAULT
// (sensor fault) or IDLE (switched off). A value has the instrument's
// significant digits in E notation, or is "none" when the instrument gives
// no number (a fault, a gauge switched off). A channel whose instrument is
// silent gets no reply to READ <n> and is left out of READ ALL. Pressures
// are in ServeOptions.Unit, temperatures in C.
//
// With ServeOptions.Address set, only requests that begin "TO <addr> " are
// answered, and replies begin "FROM <addr> " (bus devices stay quiet when
// not addressed). With ServeOptions.Checksum set, requests and replies end
// in " ~" and two hex digits (upper case in replies, either case in
// requests): the exclusive-or of every byte of the line before the digits,
// the " ~" included. A request without a good one is refused.
//
// A request that cannot be carried out gets REFUSED and a reason in place
// of the body: unknown-command, no-such-channel, bad-checksum, or too-long
// (over 64 bytes). So "READ 1\r" may get "CH1 1.23E-04 mbar GOOD\r\n" and
// "READ 9\r" gets "REFUSED no-such-channel\r\n".
func (s *Server) ServeASCII(rw io.ReadWriter) error {
	r := bufio.NewReader(rw)
	for {
		line, tooLong, err := readRequest(r)
		if err != nil {
			return err
		}
		if len(line) == 0 && !tooLong {
			continue
		}
		var reply []byte
		switch _, ours := s.unwrap(line); {
		case tooLong && ours: // the kept start names this device
			reply = s.frame([]byte(refused + refuseTooLong))
		case !tooLong:
			reply = s.Answer(line)
		}
		if reply == nil {
			continue
		}
		if _, err := rw.Write(reply); err != nil {
			return err
		}
	}
}

// readRequest reads one line up to CR or LF, keeping at most maxRequest bytes.
func readRequest(r *bufio.Reader) (line []byte, tooLong bool, err error) {
	for {
		b, err := r.ReadByte()
		if err != nil {
			return nil, false, err
		}
		if b == '\r' || b == '\n' {
			return line, tooLong, nil
		}
		if len(line) == maxRequest {
			tooLong = true
			continue
		}
		line = append(line, b)
	}
}

// Answer returns the complete reply, terminator included, to one request
// line without its terminator, or nil when the protocol says to stay
// silent (another address, a silent instrument). See ServeASCII.
func (s *Server) Answer(req []byte) []byte {
	body, ok := s.unwrap(req)
	if !ok {
		return nil
	}
	if s.opts.Checksum {
		var good bool
		if body, good = checkSum(body, req); !good {
			return s.frame([]byte(refused + refuseChecksum))
		}
	}
	reply, quiet := s.command(string(body))
	if quiet {
		return nil
	}
	return s.frame(reply)
}

// unwrap strips the address prefix; ok is false when the request is not
// for this server.
func (s *Server) unwrap(req []byte) ([]byte, bool) {
	if s.opts.Address == "" {
		return req, true
	}
	to := "TO " + s.opts.Address
	rest, found := bytes.CutPrefix(req, []byte(to))
	if !found || len(rest) > 0 && rest[0] != ' ' {
		return nil, false // another device's address, or a longer one sharing our prefix
	}
	return bytes.TrimPrefix(rest, []byte(" ")), true
}

// checkSum splits "BODY ~CS" and checks CS over the whole request up to it.
func checkSum(body, req []byte) ([]byte, bool) {
	mark := bytes.LastIndex(body, []byte(sumMark))
	if mark < 0 || len(body)-mark != len(sumMark)+2 {
		return nil, false
	}
	covered := req[:len(req)-2]
	want := hexByte(drivers.XOR8(covered))
	if !strings.EqualFold(string(body[mark+len(sumMark):]), want) {
		return nil, false
	}
	return body[:mark], true
}

func hexByte(b byte) string {
	const digits = "0123456789ABCDEF"
	return string([]byte{digits[b>>4], digits[b&15]})
}

// frame adds the address, the checksum and CR LF to a reply body.
func (s *Server) frame(body []byte) []byte {
	var out []byte
	if s.opts.Address != "" {
		out = append(out, "FROM "...)
		out = append(out, s.opts.Address...)
		out = append(out, ' ')
	}
	out = append(out, body...)
	if s.opts.Checksum {
		out = append(out, sumMark...)
		out = append(out, hexByte(drivers.XOR8(out))...)
	}
	return append(out, '\r', '\n')
}

// command carries out one command. It returns the reply body (a refusal
// included), or quiet for a silent instrument.
func (s *Server) command(cmd string) (body []byte, quiet bool) {
	verb, arg, hasArg := strings.Cut(cmd, " ")
	switch {
	case verb == "CHANNELS" && !hasArg:
		return fmt.Appendf(nil, "CHANNELS %d", len(s.ins)), false
	case verb == "READ" && arg == "ALL":
		return s.all(), false
	case verb == "READ", verb == "INFO":
		n, ok := s.channel(arg)
		if !ok {
			return []byte(refused + refuseChannel), false
		}
		if verb == "INFO" {
			c := s.Channels()[n-1]
			return fmt.Appendf(nil, "CH%d %s %s %s", n, c.Name, c.Kind, c.Unit), false
		}
		sh := s.show(n)
		if sh.silent {
			return nil, true
		}
		return s.appendShown(nil, n, sh), false
	}
	return []byte(refused + refuseUnknown), false
}

// channel parses a channel number: decimal digits naming a served channel.
func (s *Server) channel(text string) (int, bool) {
	if text == "" || len(text) > 3 || strings.Trim(text, "0123456789") != "" {
		return 0, false
	}
	n, err := strconv.Atoi(text)
	return n, err == nil && n >= 1 && n <= len(s.ins)
}

func (s *Server) all() []byte {
	var out []byte
	for n := 1; n <= len(s.ins); n++ {
		sh := s.show(n)
		if sh.silent {
			continue
		}
		if len(out) > 0 {
			out = append(out, " | "...)
		}
		out = s.appendShown(out, n, sh)
	}
	return out
}

// appendShown appends "CH<n> <value> <unit> <state>".
func (s *Server) appendShown(out []byte, n int, sh shown) []byte {
	out = append(out, "CH"...)
	out = strconv.AppendInt(out, int64(n), 10)
	out = append(out, ' ')
	out = append(out, formatValue(sh.value, sh.digits)...)
	out = append(out, ' ')
	out = append(out, s.unitOf(s.ins[n-1])...)
	out = append(out, ' ')
	return append(out, asciiState[sh.status]...)
}

// Request returns cmd (such as "READ 1") as this server expects to receive
// it: with its address and checksum, and the CR terminator.
func (s *Server) Request(cmd string) []byte {
	var out []byte
	if s.opts.Address != "" {
		out = append(out, "TO "...)
		out = append(out, s.opts.Address...)
		out = append(out, ' ')
	}
	out = append(out, cmd...)
	if s.opts.Checksum {
		out = append(out, sumMark...)
		out = append(out, hexByte(drivers.XOR8(out))...)
	}
	return append(out, '\r')
}
