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

// The ASCII protocol's status codes, one digit before each value.
var asciiStatus = map[drivers.Status]byte{
	drivers.StatusOK: '0', drivers.StatusUnderRange: '1', drivers.StatusOverRange: '2',
	drivers.StatusSensorFault: '3', drivers.StatusOff: '4',
}

// The refusal codes sent after NAK.
const (
	errUnknownCommand = "E1" // not a command of this protocol
	errNoChannel      = "E2" // the channel number is not served
	errChecksum       = "E3" // the checksum is missing or wrong
	errTooLong        = "E4" // longer than maxRequest before its terminator
)

const (
	nak        = 0x15
	maxRequest = 64 // bytes of one request, terminator excluded
)

// ServeASCII answers requests arriving on rw (the master side of a
// pseudo-terminal, say) in holdfast's own simulator protocol until rw fails,
// typically because its owner closed it.
//
// A request is a line ended by CR (an LF, or an LF after the CR, also ends
// it; empty lines are ignored). A reply is a line ended by CR LF:
//
//	request  [@ADDR]COMMAND[*CS]
//	reply    [@ADDR:]BODY[*CS]
//
// Commands and their reply bodies:
//
//	?P<n>    channel n's reading:        <status>,<value>           0,1.23E-04
//	?ALL     every channel:              <n>=<status>,<value>;...   1=0,9.87E+02;2=0,2.20E+01
//	?N<n>    what channel n is:          <name>,<kind>,<unit>       rough,pirani,mbar
//	?C       how many channels:          <count>                    4
//
// Status is 0 ok, 1 under-range, 2 over-range, 3 sensor-fault, 4 off. A
// value has the instrument's significant digits in E notation, or is
// "------" when the instrument gives no number (sensor-fault, off). A
// channel whose instrument is silent gets no reply to ?P and is left out of
// ?ALL. Pressures are in ServeOptions.Unit, temperatures in °C.
//
// With ServeOptions.Address set, only requests that begin with @ADDR are
// answered, and replies begin with @ADDR: (bus devices stay quiet when not
// addressed). With ServeOptions.Checksum set, requests and replies end in
// '*' and two upper-case hex digits: the sum modulo 256 of every byte
// before the digits, the '*' included.
//
// A request that cannot be carried out gets NAK (0x15) and a code in place
// of the body: E1 unknown command, E2 no such channel, E3 missing or wrong
// checksum, E4 request longer than 64 bytes. So "?P1\r" may get
// "0,1.23E-04\r\n" and "?X\r" gets "\x15E1\r\n".
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
		if tooLong {
			reply = s.frame(nil, true, errTooLong)
		} else {
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
			return s.frame(nil, true, errChecksum)
		}
	}
	reply, nakCode, quiet := s.command(string(body))
	switch {
	case quiet:
		return nil
	case nakCode != "":
		return s.frame(nil, true, nakCode)
	}
	return s.frame(reply, false, "")
}

// unwrap strips the address prefix; ok is false when the request is not
// for this server.
func (s *Server) unwrap(req []byte) ([]byte, bool) {
	if s.opts.Address == "" {
		return req, true
	}
	prefix := "@" + s.opts.Address
	rest, found := bytes.CutPrefix(req, []byte(prefix))
	if !found || len(rest) > 0 && rest[0] != '?' && rest[0] != '*' {
		return nil, false // another device's address, or a longer one sharing our prefix
	}
	return rest, true
}

// checkSum splits "BODY*CS" and checks CS over the whole request up to it.
func checkSum(body, req []byte) ([]byte, bool) {
	star := bytes.LastIndexByte(body, '*')
	if star < 0 || len(body)-star != 3 {
		return nil, false
	}
	covered := req[:len(req)-2]
	want := hexByte(drivers.Sum8(covered))
	if !strings.EqualFold(string(body[star+1:]), want) {
		return nil, false
	}
	return body[:star], true
}

func hexByte(b byte) string {
	const digits = "0123456789ABCDEF"
	return string([]byte{digits[b>>4], digits[b&15]})
}

// frame adds the address, the NAK, the checksum and CR LF to a reply body.
func (s *Server) frame(body []byte, refused bool, code string) []byte {
	var out []byte
	if refused {
		out = append(out, nak)
		body = []byte(code)
	}
	if s.opts.Address != "" {
		out = append(out, '@')
		out = append(out, s.opts.Address...)
		out = append(out, ':')
	}
	out = append(out, body...)
	if s.opts.Checksum {
		out = append(out, '*')
		out = append(out, hexByte(drivers.Sum8(out))...)
	}
	return append(out, '\r', '\n')
}

// command carries out one command. It returns the reply body, or the NAK
// code of a refusal, or quiet for a silent instrument.
func (s *Server) command(cmd string) (body []byte, nakCode string, quiet bool) {
	switch {
	case cmd == "?ALL":
		return s.all(), "", false
	case cmd == "?C":
		return strconv.AppendInt(nil, int64(len(s.ins)), 10), "", false
	case strings.HasPrefix(cmd, "?P"), strings.HasPrefix(cmd, "?N"):
		n, ok := s.channel(cmd[2:])
		if !ok {
			return nil, errNoChannel, false
		}
		if cmd[1] == 'N' {
			c := s.Channels()[n-1]
			return fmt.Appendf(nil, "%s,%s,%s", c.Name, c.Kind, c.Unit), "", false
		}
		sh := s.show(n)
		if sh.silent {
			return nil, "", true
		}
		return appendShown(nil, sh), "", false
	}
	return nil, errUnknownCommand, false
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
			out = append(out, ';')
		}
		out = strconv.AppendInt(out, int64(n), 10)
		out = append(out, '=')
		out = appendShown(out, sh)
	}
	return out
}

func appendShown(out []byte, sh shown) []byte {
	out = append(out, asciiStatus[sh.status], ',')
	return append(out, formatValue(sh.value, sh.digits)...)
}

// Request returns cmd (such as "?P1") as this server expects to receive
// it: with its address and checksum, and the CR terminator.
func (s *Server) Request(cmd string) []byte {
	var out []byte
	if s.opts.Address != "" {
		out = append(out, '@')
		out = append(out, s.opts.Address...)
	}
	out = append(out, cmd...)
	if s.opts.Checksum {
		out = append(out, '*')
		out = append(out, hexByte(drivers.Sum8(out))...)
	}
	return append(out, '\r')
}
