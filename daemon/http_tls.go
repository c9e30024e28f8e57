package daemon

import (
	"bytes"
	"crypto/tls"
	"crypto/x509"
	"encoding/pem"
	"fmt"
	"log/slog"
	"net"
	"net/http"
	"os"
	"sync"
	"time"
)

// certReloader serves a certificate read from files, reading them again
// when either file's modification time or size changes. It looks at most
// once a second, on a handshake, so a renewed certificate is picked up
// without a restart and without a signal. A pair that fails to load (a
// half-written renewal) keeps the last good one in service and is logged.
type certReloader struct {
	certFile, keyFile string
	log               *slog.Logger

	mu      sync.Mutex
	cert    *tls.Certificate
	stamp   [2]fileStamp
	checked time.Time
}

// fileStamp is what tells a file changed.
type fileStamp struct {
	mod  time.Time
	size int64
}

// certRecheck is how often a handshake looks at the files.
var certRecheck = time.Second

func newCertReloader(certFile, keyFile string, log *slog.Logger) (*certReloader, error) {
	r := &certReloader{certFile: certFile, keyFile: keyFile, log: log}
	st, err := r.stamps()
	if err != nil {
		return nil, err
	}
	if r.cert, err = loadKeyPair(certFile, keyFile); err != nil {
		return nil, err
	}
	r.stamp, r.checked = st, time.Now()
	return r, nil
}

// loadKeyPair reads a PEM certificate and key, naming the keys in errors.
func loadKeyPair(certFile, keyFile string) (*tls.Certificate, error) {
	c, err := tls.LoadX509KeyPair(certFile, keyFile)
	if err != nil {
		return nil, fmt.Errorf("http.tls: cannot load cert_file %s with key_file %s: %w (want PEM files, the key matching the certificate)", certFile, keyFile, err)
	}
	return &c, nil
}

func (r *certReloader) stamps() ([2]fileStamp, error) {
	var out [2]fileStamp
	for i, f := range []string{r.certFile, r.keyFile} {
		fi, err := os.Stat(f)
		if err != nil {
			return out, fmt.Errorf("http.tls: %w", err)
		}
		out[i] = fileStamp{fi.ModTime(), fi.Size()}
	}
	return out, nil
}

// GetCertificate is for tls.Config.GetCertificate.
func (r *certReloader) GetCertificate(*tls.ClientHelloInfo) (*tls.Certificate, error) {
	r.mu.Lock()
	defer r.mu.Unlock()
	if now := time.Now(); now.Sub(r.checked) >= certRecheck {
		r.checked = now
		if st, err := r.stamps(); err != nil {
			r.log.Warn("tls certificate not rechecked; serving the last one", "err", err)
		} else if st != r.stamp {
			r.stamp = st // a pair that fails is tried again once it changes again
			if c, err := loadKeyPair(r.certFile, r.keyFile); err != nil {
				r.log.Warn("tls certificate changed but does not load; serving the last one", "err", err)
			} else {
				r.cert = c
				r.log.Info("tls certificate reloaded", "cert_file", r.certFile)
			}
		}
	}
	return r.cert, nil
}

// listen opens http.listen, under TLS when http.tls is set.
func (d *Daemon) listen() (net.Listener, error) {
	h := d.cfg.HTTP
	var tcfg *tls.Config
	if h.TLS != nil {
		r, err := newCertReloader(h.TLS.CertFile, h.TLS.KeyFile, d.log.With("part", "http"))
		if err != nil {
			return nil, err
		}
		tcfg = &tls.Config{MinVersion: tls.VersionTLS12, GetCertificate: r.GetCertificate}
	}
	ln, err := net.Listen("tcp", h.Listen)
	if err != nil {
		return nil, fmt.Errorf("http listen: %w", err)
	}
	if tcfg != nil {
		ln = tls.NewListener(ln, tcfg)
	}
	return ln, nil
}

// server is the HTTP server with the configured timeouts; a zero timeout
// (a config not passed through the checker) takes the default.
func (d *Daemon) server(h http.Handler) *http.Server {
	t := d.cfg.HTTP.Timeouts
	or := func(v Duration, def time.Duration) time.Duration {
		if v > 0 {
			return v.D()
		}
		return def
	}
	return &http.Server{Handler: h,
		ReadHeaderTimeout: or(t.ReadHeader, defaultReadHeaderTimeout),
		ReadTimeout:       or(t.Read, defaultReadTimeout),
		WriteTimeout:      or(t.Write, defaultWriteTimeout),
		IdleTimeout:       or(t.Idle, defaultIdleTimeout),
		ErrorLog:          slog.NewLogLogger(d.log.With("part", "http").Handler(), slog.LevelDebug),
	}
}

// Scheme is "https" when http.tls is set, else "http".
func (h HTTPConfig) Scheme() string {
	if h.TLS != nil {
		return "https"
	}
	return "http"
}

// ClientTLS is how a command on the daemon's own machine (holdfast alarms,
// report, ...) trusts it when it dials the listen address from the config:
// the certificate in http.tls.cert_file, read at each handshake, must be
// the one served, byte for byte, whatever names it carries; a cert_file
// this user cannot read falls back to the system's roots. Nil without
// http.tls.
func (h HTTPConfig) ClientTLS() *tls.Config {
	if h.TLS == nil {
		return nil
	}
	certFile := h.TLS.CertFile
	if _, err := os.ReadFile(certFile); err != nil {
		return &tls.Config{MinVersion: tls.VersionTLS12}
	}
	return &tls.Config{MinVersion: tls.VersionTLS12,
		InsecureSkipVerify: true, // replaced by the exact match below
		VerifyPeerCertificate: func(raw [][]byte, _ [][]*x509.Certificate) error {
			var want []byte
			if b, err := os.ReadFile(certFile); err == nil {
				if blk, _ := pem.Decode(b); blk != nil && blk.Type == "CERTIFICATE" {
					want = blk.Bytes // the leaf comes first
				}
			}
			if len(raw) == 0 || want == nil || !bytes.Equal(raw[0], want) {
				return fmt.Errorf("the daemon's certificate is not the one in http.tls.cert_file %s", certFile)
			}
			return nil
		}}
}
