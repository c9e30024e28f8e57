package notify

import (
	"bytes"
	"context"
	"crypto/sha256"
	"crypto/tls"
	"encoding/hex"
	"errors"
	"fmt"
	"mime"
	"mime/quotedprintable"
	"net"
	"net/smtp"
	"strings"
	"time"
)

// Mail sends each batch as one plain-text message through an SMTP relay.
// STARTTLS is required unless PlainLoopback is set, which is only allowed
// for a relay on the loopback interface.
type Mail struct {
	Server        string // host:port of the relay, e.g. mail.example.internal:587
	From          string
	To            []string
	Username      string // empty: no AUTH
	Password      string
	PlainLoopback bool        // send without TLS to a relay on 127.0.0.1 / ::1 only
	TLS           *tls.Config // nil: verify the relay's certificate against the system roots
	Hello         string      // name given in EHLO; default "localhost"
	Now           func() time.Time
}

// ErrNoStartTLS is returned when the relay does not offer STARTTLS and
// plain sending was not allowed.
var ErrNoStartTLS = errors.New("the mail relay does not offer STARTTLS; refusing to send the alarm and password in the clear")

// Send delivers the batch as one message.
func (m *Mail) Send(ctx context.Context, batch []Transition) (err error) {
	host, _, err := net.SplitHostPort(m.Server)
	if err != nil {
		return fmt.Errorf("mail server %q: %w", m.Server, err)
	}
	if m.PlainLoopback && !IsLoopback(host) {
		return fmt.Errorf("mail server %q: sending without TLS is allowed only to a loopback relay", m.Server)
	}
	conn, err := (&net.Dialer{}).DialContext(ctx, "tcp", m.Server)
	if err != nil {
		return fmt.Errorf("mail: %w", err)
	}
	stop := context.AfterFunc(ctx, func() { conn.SetDeadline(time.Now()) }) // unblock on cancel
	defer stop()
	c, err := smtp.NewClient(conn, host)
	if err != nil {
		conn.Close()
		return fmt.Errorf("mail: greeting: %w", err)
	}
	defer c.Close()
	if err := m.converse(c, host, batch); err != nil {
		return fmt.Errorf("mail via %s: %w", m.Server, err)
	}
	return nil
}

func (m *Mail) converse(c *smtp.Client, host string, batch []Transition) error {
	hello := m.Hello
	if hello == "" {
		hello = "localhost"
	}
	if err := c.Hello(hello); err != nil {
		return err
	}
	if ok, _ := c.Extension("STARTTLS"); ok {
		cfg := m.TLS
		if cfg == nil {
			cfg = &tls.Config{ServerName: host, MinVersion: tls.VersionTLS12}
		}
		if err := c.StartTLS(cfg); err != nil {
			return fmt.Errorf("starttls: %w", err)
		}
	} else if !m.PlainLoopback {
		return ErrNoStartTLS
	}
	if m.Username != "" {
		if err := c.Auth(smtp.PlainAuth("", m.Username, m.Password, host)); err != nil {
			return fmt.Errorf("auth: %w", err)
		}
	}
	if err := c.Mail(m.From); err != nil {
		return err
	}
	for _, to := range m.To {
		if err := c.Rcpt(to); err != nil {
			return fmt.Errorf("recipient %s: %w", to, err)
		}
	}
	w, err := c.Data()
	if err != nil {
		return err
	}
	now := time.Now
	if m.Now != nil {
		now = m.Now
	}
	if _, err := w.Write(m.Message(batch, now())); err != nil {
		return err
	}
	if err := w.Close(); err != nil {
		return err
	}
	return c.Quit()
}

// Message is the RFC 5322 message for a batch. Its Message-ID is derived
// from the batch's dedupe keys, so a resent batch carries the same ID and
// mail systems can drop the repeat.
func (m *Mail) Message(batch []Transition, now time.Time) []byte {
	var body bytes.Buffer
	for i, t := range batch {
		if i > 0 {
			body.WriteString("\n")
		}
		body.WriteString(Summary(t) + "\n\n" + Describe(t))
	}
	body.WriteString("\n-- \n" + Caution + "\n")

	var msg bytes.Buffer
	header := func(k, v string) { fmt.Fprintf(&msg, "%s: %s\r\n", k, v) }
	header("From", m.From)
	header("To", strings.Join(m.To, ", "))
	header("Subject", mime.QEncoding.Encode("utf-8", Subject(batch)))
	header("Date", now.Format(time.RFC1123Z))
	header("Message-ID", "<"+messageID(batch)+"@holdfast.invalid>")
	header("MIME-Version", "1.0")
	header("Content-Type", "text/plain; charset=utf-8")
	header("Content-Transfer-Encoding", "quoted-printable")
	header("Auto-Submitted", "auto-generated") // RFC 3834: no auto-replies
	msg.WriteString("\r\n")
	qp := quotedprintable.NewWriter(&msg)
	qp.Write(body.Bytes()) // text mode: line ends become CRLF
	qp.Close()
	return msg.Bytes()
}

func messageID(batch []Transition) string {
	h := sha256.New()
	for _, t := range batch {
		h.Write([]byte(t.DedupeKey + "\n"))
	}
	return hex.EncodeToString(h.Sum(nil)[:16])
}

// IsLoopback reports whether host names the loopback interface:
// localhost, or an address in 127.0.0.0/8 or ::1.
func IsLoopback(host string) bool {
	if host == "localhost" {
		return true
	}
	ip := net.ParseIP(host)
	return ip != nil && ip.IsLoopback()
}
