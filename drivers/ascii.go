package drivers

import (
	"bytes"
	"context"
	"errors"
	"fmt"
	"maps"
	"math"
	"slices"
	"strconv"
	"strings"
	"time"
)

// ASCII is the "ascii" driver: the configured exchange of ASCIIOptions run
// over a Link. It implements MultiDriver.
type ASCII struct {
	link  Link
	opts  Options
	steps []asciiStep
	cs    Checksum
	msg   []byte // scratch for the message being sent
}

// NewASCII checks opts.ASCII and builds the driver. Its error lists every
// problem of the options (see ASCIIOptions.Validate).
func NewASCII(link Link, opts Options) (*ASCII, error) {
	if link == nil {
		return nil, errors.New("ascii driver needs a link")
	}
	steps, err := opts.ASCII.compile()
	if err != nil {
		return nil, err
	}
	d := &ASCII{link: link, opts: opts, steps: steps}
	if opts.ASCII.Checksum != nil {
		d.cs = *opts.ASCII.Checksum
	}
	return d, nil
}

// A channelReading is one reading of an exchange with the key it goes by.
type channelReading struct {
	key string
	r   Reading
}

// Read runs the exchange and returns the configured channel's reading, or
// the only reading when the exchange yields one.
func (d *ASCII) Read(ctx context.Context) (Reading, error) {
	rs, err := d.exchange(ctx)
	if err != nil {
		return Reading{}, err
	}
	want := d.opts.ASCII.Channel
	if want == "" && len(rs) == 1 {
		return rs[0].r, nil
	}
	if want == "" {
		want = rs[0].key
	}
	for _, c := range rs {
		if c.key == want {
			return c.r, nil
		}
	}
	return Reading{}, d.fail("parse reply", fmt.Errorf("the reply carries no channel %q (it has %s)", want, keysOf(rs)))
}

// ReadAll runs the exchange and returns every reading it yields.
func (d *ASCII) ReadAll(ctx context.Context) (map[string]Reading, error) {
	rs, err := d.exchange(ctx)
	if err != nil {
		return nil, err
	}
	out := make(map[string]Reading, len(rs))
	for _, c := range rs {
		out[c.key] = c.r
	}
	return out, nil
}

func keysOf(rs []channelReading) string {
	ks := make([]string, len(rs))
	for i, c := range rs {
		ks[i] = strconv.Quote(c.key)
	}
	return strings.Join(ks, ", ")
}

func (d *ASCII) fail(op string, err error) error {
	return &GaugeError{Gauge: d.opts.Gauge, Op: op, Err: err}
}

func (d *ASCII) exchange(ctx context.Context) ([]channelReading, error) {
	start := d.opts.now()
	var rs []channelReading
	for i := range d.steps {
		st := &d.steps[i]
		reply, err := d.runStep(ctx, st)
		if err != nil {
			return nil, d.fail("read", fmt.Errorf("step %d: %w", i+1, err))
		}
		if st.re == nil {
			continue
		}
		if rs, err = d.parse(st, reply, rs); err != nil {
			return nil, d.fail("parse reply", fmt.Errorf("step %d: %w", i+1, err))
		}
	}
	if len(rs) == 0 {
		return nil, d.fail("parse reply", errors.New("the exchange gave no value"))
	}
	end := d.opts.now()
	mid := start.Add(end.Sub(start) / 2)
	for i := range rs {
		rs[i].r.At = mid
	}
	return rs, nil
}

func (d *ASCII) runStep(ctx context.Context, st *asciiStep) ([]byte, error) {
	if st.wait > 0 {
		t := time.NewTimer(st.wait)
		select {
		case <-ctx.Done():
			t.Stop()
			return nil, ctx.Err()
		case <-t.C:
		}
	}
	if st.timeout > 0 {
		var cancel context.CancelFunc
		ctx, cancel = context.WithTimeout(ctx, st.timeout)
		defer cancel()
	}
	msg := d.message(st)
	if len(msg) > 0 {
		d.trace("send", msg)
	}
	if st.re == nil {
		return nil, sendOnly(ctx, d.link, msg)
	}
	reply, err := d.link.Exchange(ctx, msg, st.until)
	if len(reply) > 0 {
		d.trace("recv", reply)
	}
	return reply, err
}

// message returns the bytes a step sends, with its checksum in place.
func (d *ASCII) message(st *asciiStep) []byte {
	if st.csAt < 0 {
		return st.send
	}
	d.msg = append(d.msg[:0], st.send[:st.csAt]...)
	cover, _ := d.cs.cover(d.msg, st.csAt) // compile checked skip <= csAt
	d.msg = append(d.msg, d.cs.encode(cover)...)
	return append(d.msg, st.send[st.csAt:]...)
}

func (d *ASCII) trace(dir string, b []byte) {
	if d.opts.Trace != nil {
		d.opts.Trace(dir, bytes.Clone(b))
	}
}

// parse matches one reply and appends its readings to rs.
func (d *ASCII) parse(st *asciiStep, reply []byte, rs []channelReading) ([]channelReading, error) {
	body := bytes.TrimRight(reply, "\r\n")
	if len(body) > 0 && body[0] == 0x15 {
		return rs, fmt.Errorf("the instrument refused the command (NAK): %q", reply)
	}
	matches := st.re.FindAllSubmatchIndex(body, -1)
	if len(matches) == 0 {
		return rs, fmt.Errorf("reply %q does not match %q", reply, st.re)
	}
	for _, m := range matches {
		if st.checksum >= 0 && m[2*st.checksum] >= 0 {
			at := m[2*st.checksum]
			if err := d.cs.verify(body, at, body[at:m[2*st.checksum+1]]); err != nil {
				return rs, fmt.Errorf("reply %q: %w", reply, err)
			}
		}
		if st.value < 0 {
			continue
		}
		r, err := d.reading(st, body, m)
		if err != nil {
			return rs, fmt.Errorf("reply %q: %w", reply, err)
		}
		rs = append(rs, channelReading{key: d.key(st, body, m, len(rs)), r: r})
	}
	return rs, nil
}

func group(body []byte, m []int, i int) (string, bool) {
	if i < 0 || m[2*i] < 0 {
		return "", false
	}
	return strings.TrimSpace(string(body[m[2*i]:m[2*i+1]])), true
}

func (d *ASCII) key(st *asciiStep, body []byte, m []int, n int) string {
	if k, ok := group(body, m, st.channel); ok {
		return k
	}
	if st.gauge != "" {
		return st.gauge
	}
	return strconv.Itoa(n + 1)
}

func (d *ASCII) reading(st *asciiStep, body []byte, m []int) (Reading, error) {
	r := Reading{Status: StatusOK}
	if code, ok := group(body, m, st.status); ok {
		s, err := d.status(code)
		if err != nil {
			return r, err
		}
		r.Status = s
	}
	text, _ := group(body, m, st.value)
	v, err := ParseNumber(text)
	switch {
	case err == nil:
		r.Raw = v // kept with a non-ok status too: some instruments print the limit they hit
	case r.Status != StatusOK:
		r.Raw = math.NaN()
	default:
		s, ok := d.opts.ASCII.Status[text]
		if !ok {
			return r, err
		}
		r.Status, r.Raw = s, math.NaN()
	}
	return r, nil
}

func (d *ASCII) status(code string) (Status, error) {
	if s, ok := d.opts.ASCII.Status[code]; ok {
		return s, nil
	}
	known := slices.Sorted(maps.Keys(d.opts.ASCII.Status))
	return 0, fmt.Errorf("status code %q is not in the status map (mapped: %s); add it to status", code, strings.Join(known, ", "))
}

// A sender can write without waiting for a reply; StreamLink is one.
type sender interface {
	Send(ctx context.Context, req []byte) error
}

// sendOnly writes msg; over a Link that cannot send alone, it runs an
// exchange and takes the missing reply as expected.
func sendOnly(ctx context.Context, l Link, msg []byte) error {
	if s, ok := l.(sender); ok {
		return s.Send(ctx, msg)
	}
	_, err := l.Exchange(ctx, msg, 0)
	if errors.Is(err, ErrNoReply) {
		err = nil
	}
	return err
}
