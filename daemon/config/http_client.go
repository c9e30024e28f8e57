package config

import (
	"bytes"
	"crypto/tls"
	"crypto/x509"
	"encoding/pem"
	"fmt"
	"os"
)

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
