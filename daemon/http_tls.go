package daemon

import (
	"crypto/tls"
	"fmt"
	"holdfast/daemon/config"
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
	if r.cert, err = config.LoadKeyPair(certFile, keyFile); err != nil {
		return nil, err
	}
	r.stamp, r.checked = st, time.Now()
	return r, nil
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
			if c, err := config.LoadKeyPair(r.certFile, r.keyFile); err != nil {
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
	h := d.conf().HTTP
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
	t := d.conf().HTTP.Timeouts
	or := func(v config.Duration, def time.Duration) time.Duration {
		if v > 0 {
			return v.D()
		}
		return def
	}
	return &http.Server{Handler: h,
		ReadHeaderTimeout: or(t.ReadHeader, config.DefaultReadHeaderTimeout),
		ReadTimeout:       or(t.Read, config.DefaultReadTimeout),
		WriteTimeout:      or(t.Write, config.DefaultWriteTimeout),
		IdleTimeout:       or(t.Idle, config.DefaultIdleTimeout),
		ErrorLog:          slog.NewLogLogger(d.log.With("part", "http").Handler(), slog.LevelDebug),
	}
}
