package config

import (
	"crypto/tls"
	"errors"
	"fmt"
	"io/fs"
	"os"
	"strings"
)

// ReadToken reads the bearer token that guards changes. No file means no
// token: the API then refuses every change.
func ReadToken(path string) (string, error) {
	if path == "" {
		return "", nil
	}
	b, err := os.ReadFile(path)
	if err != nil {
		if errors.Is(err, fs.ErrNotExist) {
			return "", fmt.Errorf("http.token_file: %w (make one with: holdfast token new %s)", err, path)
		}
		return "", fmt.Errorf("http.token_file: %w", err)
	}
	tok := strings.TrimSpace(string(b))
	if len(tok) < 16 {
		return "", fmt.Errorf("http.token_file %s: the token must be at least 16 characters (make one with: holdfast token new --force %s)", path, path)
	}
	return tok, nil
}

// LoadKeyPair reads a PEM certificate and key, naming the keys in errors.
func LoadKeyPair(certFile, keyFile string) (*tls.Certificate, error) {
	c, err := tls.LoadX509KeyPair(certFile, keyFile)
	if err != nil {
		return nil, fmt.Errorf("http.tls: cannot load cert_file %s with key_file %s: %w (want PEM files, the key matching the certificate)", certFile, keyFile, err)
	}
	return &c, nil
}
