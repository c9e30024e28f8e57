package notify

import (
	"bufio"
	"crypto/ecdsa"
	"crypto/elliptic"
	"crypto/rand"
	"crypto/tls"
	"crypto/x509"
	"encoding/base64"
	"errors"
	"io"
	"math/big"
	"mime"
	"mime/quotedprintable"
	"net"
	"net/mail"
	"strings"
	"testing"
	"time"
)

// session is what the test relay saw on one connection.
type session struct {
	cmds    []string
	data    string
	usedTLS bool
}

// relay is a tiny SMTP server (RFC 5321 replies) on 127.0.0.1 for one
// connection. With cfg set it offers STARTTLS (RFC 3207).
func relay(t *testing.T, cfg *tls.Config) (addr string, got <-chan session) {
	t.Helper()
	ln, err := net.Listen("tcp", "127.0.0.1:0")
	if err != nil {
		t.Fatal(err)
	}
	ch := make(chan session, 1)
	go func() {
		defer ln.Close()
		conn, err := ln.Accept()
		if err != nil {
			ch <- session{}
			return
		}
		defer conn.Close()
		conn.SetDeadline(time.Now().Add(10 * time.Second))
		ch <- converse(conn, cfg)
	}()
	return ln.Addr().String(), ch
}

func converse(conn net.Conn, cfg *tls.Config) (s session) {
	r := bufio.NewReader(conn)
	say := func(lines ...string) { io.WriteString(conn, strings.Join(lines, "\r\n")+"\r\n") }
	say("220 relay.test ESMTP ready")
	for {
		line, err := r.ReadString('\n')
		if err != nil {
			return s
		}
		line = strings.TrimRight(line, "\r\n")
		s.cmds = append(s.cmds, line)
		verb := strings.ToUpper(strings.SplitN(line, " ", 2)[0])
		switch {
		case verb == "EHLO" && cfg != nil && !s.usedTLS:
			say("250-relay.test", "250-STARTTLS", "250 AUTH PLAIN")
		case verb == "EHLO":
			say("250-relay.test", "250 AUTH PLAIN")
		case verb == "STARTTLS":
			say("220 go ahead")
			tc := tls.Server(conn, cfg)
			if tc.Handshake() != nil {
				return s
			}
			conn, r, s.usedTLS = tc, bufio.NewReader(tc), true
		case verb == "AUTH":
			say("235 2.7.0 accepted")
		case verb == "MAIL" || verb == "RCPT":
			say("250 ok")
		case verb == "DATA":
			say("354 end with a dot")
			var b strings.Builder
			for {
				l, err := r.ReadString('\n')
				if err != nil || l == ".\r\n" {
					break
				}
				b.WriteString(l)
			}
			s.data = b.String()
			say("250 queued")
		case verb == "QUIT":
			say("221 bye")
			return s
		default:
			say("502 not here")
		}
	}
}

func testMail(addr string) *Mail {
	return &Mail{Server: addr, From: "holdfast@lab.example.internal",
		To:       []string{"oncall@lab.example.internal", "vacuum-team@lab.example.internal"},
		Username: "holdfast", Password: "s3cret", Hello: "bakeout-3.lab.example.internal"}
}

// Plain SMTP to a loopback relay, explicitly allowed: the whole exchange
// in RFC 5321 order, PLAIN credentials as RFC 4616 lays them out, and a
// message that mail parsers read back with its numbers and the caution.
func TestMailPlainLoopback(t *testing.T) {
	addr, got := relay(t, nil)
	m := testMail(addr)
	m.PlainLoopback = true
	batch := []Transition{exampleRaise()}
	if err := m.Send(t.Context(), batch); err != nil {
		t.Fatal(err)
	}
	s := <-got
	auth := base64.StdEncoding.EncodeToString([]byte("\x00holdfast\x00s3cret"))
	want := []string{"EHLO bakeout-3.lab.example.internal", "AUTH PLAIN " + auth,
		"MAIL FROM:<holdfast@lab.example.internal>", "RCPT TO:<oncall@lab.example.internal>",
		"RCPT TO:<vacuum-team@lab.example.internal>", "DATA", "QUIT"}
	if strings.Join(s.cmds, "\n") != strings.Join(want, "\n") {
		t.Errorf("conversation:\n%s\nwant:\n%s", strings.Join(s.cmds, "\n"), strings.Join(want, "\n"))
	}
	msg, err := mail.ReadMessage(strings.NewReader(s.data))
	if err != nil {
		t.Fatalf("message does not parse: %v\n%s", err, s.data)
	}
	subject, _ := new(mime.WordDecoder).DecodeHeader(msg.Header.Get("Subject"))
	if subject != "[high] bakeout-3: rough-vacuum-lost raised, chamber = 12.5 Pa (limit 10 Pa)" {
		t.Errorf("subject %q", subject)
	}
	body, _ := io.ReadAll(quotedprintable.NewReader(msg.Body))
	for _, w := range []string{"value:     12.5 Pa", "limit:     10 Pa", "not a safety interlock", batch[0].DedupeKey} {
		if !strings.Contains(string(body), w) {
			t.Errorf("body lacks %q:\n%s", w, body)
		}
	}
	if id := msg.Header.Get("Message-ID"); id != "<"+messageID(batch)+"@holdfast.invalid>" || len(id) < 20 {
		t.Errorf("Message-ID %q", id)
	}
}

// Without the opt-out, a relay that offers no STARTTLS gets neither the
// password nor the alarm.
func TestMailRequiresStartTLS(t *testing.T) {
	addr, got := relay(t, nil)
	err := testMail(addr).Send(t.Context(), []Transition{exampleRaise()})
	if !errors.Is(err, ErrNoStartTLS) {
		t.Fatalf("got %v, want ErrNoStartTLS", err)
	}
	s := <-got
	for _, c := range s.cmds {
		if strings.HasPrefix(c, "AUTH") || strings.HasPrefix(c, "MAIL") {
			t.Errorf("sent %q over a plain connection", c)
		}
	}
	m := testMail("relay.example.internal:25")
	m.PlainLoopback = true
	if err := m.Send(t.Context(), nil); err == nil || !strings.Contains(err.Error(), "loopback") {
		t.Errorf("plain to a non-loopback relay: %v, want a refusal naming loopback", err)
	}
}

// With STARTTLS offered the client upgrades before AUTH and MAIL.
func TestMailStartTLS(t *testing.T) {
	serverCfg, roots := selfSigned(t)
	addr, got := relay(t, serverCfg)
	m := testMail(addr)
	m.TLS = &tls.Config{RootCAs: roots, ServerName: "127.0.0.1", MinVersion: tls.VersionTLS12}
	if err := m.Send(t.Context(), []Transition{exampleRaise()}); err != nil {
		t.Fatal(err)
	}
	s := <-got
	if !s.usedTLS || len(s.cmds) < 3 || s.cmds[1] != "STARTTLS" || !strings.HasPrefix(s.cmds[2], "EHLO") {
		t.Errorf("used TLS %v, commands %q", s.usedTLS, s.cmds)
	}
}

func selfSigned(t *testing.T) (*tls.Config, *x509.CertPool) {
	t.Helper()
	key, err := ecdsa.GenerateKey(elliptic.P256(), rand.Reader)
	if err != nil {
		t.Fatal(err)
	}
	tmpl := &x509.Certificate{SerialNumber: big.NewInt(1), NotBefore: time.Now().Add(-time.Hour),
		NotAfter: time.Now().Add(time.Hour), IPAddresses: []net.IP{net.IPv4(127, 0, 0, 1)},
		KeyUsage: x509.KeyUsageDigitalSignature, ExtKeyUsage: []x509.ExtKeyUsage{x509.ExtKeyUsageServerAuth},
		BasicConstraintsValid: true, IsCA: true}
	der, err := x509.CreateCertificate(rand.Reader, tmpl, tmpl, &key.PublicKey, key)
	if err != nil {
		t.Fatal(err)
	}
	cert, _ := x509.ParseCertificate(der)
	roots := x509.NewCertPool()
	roots.AddCert(cert)
	return &tls.Config{Certificates: []tls.Certificate{{Certificate: [][]byte{der}, PrivateKey: key}}}, roots
}
