package notify

import (
	"crypto/hmac"
	"crypto/sha256"
	"encoding/hex"
	"errors"
	"fmt"
	"net/http"
	"strconv"
	"strings"
	"time"
)

// Webhook signature headers. The signature is HMAC-SHA256, keyed with the
// shared secret, over the timestamp's decimal digits, one line feed, and
// the exact body bytes; the header carries "sha256=" and the lower-case hex
// digest. Signing the timestamp lets a receiver refuse old (replayed)
// requests.
const (
	HeaderTimestamp = "Holdfast-Timestamp" // Unix seconds when the request was signed
	HeaderSignature = "Holdfast-Signature" // "sha256=" + hex HMAC
	signaturePrefix = "sha256="
)

// ErrSignature is wrapped by every Verify failure.
var ErrSignature = errors.New("webhook signature rejected")

// mac is HMAC-SHA256(secret, msg).
func mac(secret, msg []byte) []byte {
	h := hmac.New(sha256.New, secret)
	h.Write(msg)
	return h.Sum(nil)
}

func signedMessage(timestamp string, body []byte) []byte {
	msg := make([]byte, 0, len(timestamp)+1+len(body))
	return append(append(append(msg, timestamp...), '\n'), body...)
}

// Sign sets the signature headers on h for body signed at unix seconds.
func Sign(h http.Header, secret []byte, unix int64, body []byte) {
	ts := strconv.FormatInt(unix, 10)
	h.Set(HeaderTimestamp, ts)
	h.Set(HeaderSignature, signaturePrefix+hex.EncodeToString(mac(secret, signedMessage(ts, body))))
}

// Verify checks a webhook request's signature headers against the exact
// body bytes received, and refuses a timestamp more than maxAge away from
// now (either way). Receivers can copy this function: it uses only the
// standard library. Verify before parsing the body, and drop a dedupe_key
// already seen: delivery is at least once.
func Verify(h http.Header, body, secret []byte, now time.Time, maxAge time.Duration) error {
	ts, sig := h.Get(HeaderTimestamp), h.Get(HeaderSignature)
	if ts == "" || sig == "" {
		return fmt.Errorf("%w: missing %s or %s header", ErrSignature, HeaderTimestamp, HeaderSignature)
	}
	unix, err := strconv.ParseInt(ts, 10, 64)
	if err != nil {
		return fmt.Errorf("%w: %s %q is not Unix seconds", ErrSignature, HeaderTimestamp, ts)
	}
	if age := now.Sub(time.Unix(unix, 0)); age > maxAge || age < -maxAge {
		return fmt.Errorf("%w: signed %s from now, outside ±%s (replayed, or a clock is wrong)", ErrSignature, -age.Round(time.Second), maxAge)
	}
	got, err := hex.DecodeString(strings.TrimPrefix(sig, signaturePrefix))
	if err != nil || !strings.HasPrefix(sig, signaturePrefix) {
		return fmt.Errorf("%w: %s must be %s followed by hex", ErrSignature, HeaderSignature, signaturePrefix)
	}
	if !hmac.Equal(got, mac(secret, signedMessage(ts, body))) {
		return fmt.Errorf("%w: digest does not match (wrong secret, or the body was changed)", ErrSignature)
	}
	return nil
}
