package config

import (
	"net"
	"time"

	"holdfast/alerts/notify"
)

// HTTP hardening defaults: how long a client may take over each part of a
// request, and the largest request body any endpoint reads.
const (
	DefaultReadHeaderTimeout = 5 * time.Second
	DefaultReadTimeout       = 30 * time.Second
	DefaultWriteTimeout      = 2 * time.Minute // a report or a reprocess reply can take a while
	DefaultIdleTimeout       = 2 * time.Minute
	DefaultMaxBodyBytes      = 1 << 20
)

// HTTPTLSConfig turns on HTTPS. Both files are PEM; they are read again
// when either changes on disk, so a renewed certificate is served without a
// restart.
type HTTPTLSConfig struct {
	CertFile string `yaml:"cert_file"` // certificate chain, leaf first
	KeyFile  string `yaml:"key_file"`  // its private key
}

// MetricsAuthConfig guards GET /metrics: either basic auth (username and a
// password from a file or credential) or a bearer token. The other
// endpoints are unaffected.
type MetricsAuthConfig struct {
	Username           string `yaml:"username"`
	PasswordFile       string `yaml:"password_file"`
	PasswordCredential string `yaml:"password_credential"`
	TokenFile          string `yaml:"token_file"`
	TokenCredential    string `yaml:"token_credential"`

	Password string `yaml:"-"` // read by the checker
	Token    string `yaml:"-"` // read by the checker
}

// HTTPTimeouts bound how long one client may hold a connection; zero keeps
// the default.
type HTTPTimeouts struct {
	ReadHeader Duration `yaml:"read_header"` // request line and headers; default 5s
	Read       Duration `yaml:"read"`        // the whole request, body included; default 30s
	Write      Duration `yaml:"write"`       // from the end of the headers to the end of the reply; default 2m
	Idle       Duration `yaml:"idle"`        // a kept-alive connection waiting for its next request; default 2m
}

// checkHTTPHardening checks http.tls, http.metrics_auth, http.timeouts and
// http.max_body_bytes, fills their defaults, and refuses state-changing
// endpoints on a non-loopback address without a token.
func (v *checker) checkHTTPHardening(h *HTTPConfig) {
	if t := h.TLS; t != nil {
		v.expect(t.CertFile != "", "http.tls.cert_file", "missing; name the PEM certificate file, e.g. /etc/holdfast/tls/cert.pem")
		v.expect(t.KeyFile != "", "http.tls.key_file", "missing; name the PEM private key file, e.g. /etc/holdfast/tls/key.pem")
		if t.CertFile != "" && t.KeyFile != "" {
			if _, err := LoadKeyPair(t.CertFile, t.KeyFile); err != nil {
				if v.secretsOptional() {
					v.note("http.tls", "%v; the daemon will need it", err)
				} else {
					v.problem("http.tls", "%v", err)
				}
			}
		}
	}
	if m := h.MetricsAuth; m != nil {
		basic := m.Username != "" || m.PasswordFile != "" || m.PasswordCredential != ""
		bearer := m.TokenFile != "" || m.TokenCredential != ""
		switch {
		case basic && bearer:
			v.problem("http.metrics_auth", "give username with password_file (basic auth) or token_file (bearer token), not both")
		case basic:
			v.expect(m.Username != "", "http.metrics_auth.username", "missing; basic auth needs a user name, e.g. username: scraper")
			m.Password = string(v.secret(secretRef{path: "http.metrics_auth", fileKey: "password_file", credKey: "password_credential",
				file: m.PasswordFile, credential: m.PasswordCredential, required: true}))
		case bearer:
			m.Token = string(v.secret(secretRef{path: "http.metrics_auth", fileKey: "token_file", credKey: "token_credential",
				file: m.TokenFile, credential: m.TokenCredential, required: true}))
		default:
			v.problem("http.metrics_auth", "empty; give username and password_file for basic auth, or token_file for a bearer token, or remove metrics_auth")
		}
	}
	t := &h.Timeouts
	for _, f := range []struct {
		key string
		d   *Duration
		def time.Duration
	}{{"read_header", &t.ReadHeader, DefaultReadHeaderTimeout}, {"read", &t.Read, DefaultReadTimeout},
		{"write", &t.Write, DefaultWriteTimeout}, {"idle", &t.Idle, DefaultIdleTimeout}} {
		v.expect(*f.d >= 0, "http.timeouts."+f.key, "must not be negative, got %s", shortDuration(f.d.D()))
		if *f.d == 0 {
			*f.d = Duration(f.def)
		}
	}
	v.expect(h.MaxBodyBytes >= 0, "http.max_body_bytes", "must not be negative, got %d", h.MaxBodyBytes)
	if h.MaxBodyBytes == 0 {
		h.MaxBodyBytes = DefaultMaxBodyBytes
	}
	if host, _, err := net.SplitHostPort(h.Listen); err == nil && !notify.IsLoopback(host) && h.TokenFile == "" && h.TokenCredential == "" {
		v.problem("http.listen", "%s is reachable from other machines but no http.token_file (or http.token_credential) is set, "+
			"so anyone who can reach it could ask for changes; make a token (holdfast token new /etc/holdfast/token) and set "+
			"http.token_file: /etc/holdfast/token, or listen on 127.0.0.1", h.Listen)
	}
}
