package notify

import (
	"encoding/hex"
	"errors"
	"net/http"
	"testing"
	"time"
)

// The MAC is HMAC-SHA256 as RFC 4231 defines it: its test cases 1 and 2
// (RFC 4231 section 4.2 and 4.3, "HMAC-SHA-256" lines).
func TestMACRFC4231(t *testing.T) {
	key1 := make([]byte, 20)
	for i := range key1 {
		key1[i] = 0x0b
	}
	cases := []struct {
		key, data []byte
		want      string
	}{
		{key1, []byte("Hi There"), "b0344c61d8db38535ca8afceaf0bf12b881dc200c9833da726e9376c2e32cff7"},
		{[]byte("Jefe"), []byte("what do ya want for nothing?"), "5bdcc146bf60754e6a042426089575c75a003f089d2739839dec58b964ec3843"},
	}
	for i, c := range cases {
		if got := hex.EncodeToString(mac(c.key, c.data)); got != c.want {
			t.Errorf("RFC 4231 case %d: got %s, want %s", i+1, got, c.want)
		}
	}
}

// The signed message is the timestamp's digits, a line feed and the body,
// as the HeaderSignature documentation tells receivers.
func TestSignedMessageLayout(t *testing.T) {
	if got := string(signedMessage("1700000000", []byte(`{"a":1}`))); got != "1700000000\n{\"a\":1}" {
		t.Errorf("signed message %q", got)
	}
}

func TestVerify(t *testing.T) {
	secret := []byte("a shared secret for a test receiver")
	body := []byte(`{"schema":"holdfast.notify/v1","transitions":[]}`)
	signedAt := time.Unix(1_800_000_000, 0)
	h := http.Header{}
	Sign(h, secret, signedAt.Unix(), body)
	if err := Verify(h, body, secret, signedAt.Add(30*time.Second), 5*time.Minute); err != nil {
		t.Fatalf("a good signature was refused: %v", err)
	}
	tampered := append([]byte(nil), body...)
	tampered[len(tampered)-2] = ' '
	bad := map[string]func() (http.Header, []byte, []byte, time.Time){
		"changed body": func() (http.Header, []byte, []byte, time.Time) { return h, tampered, secret, signedAt },
		"wrong secret": func() (http.Header, []byte, []byte, time.Time) { return h, body, []byte("guess"), signedAt },
		"replayed late": func() (http.Header, []byte, []byte, time.Time) {
			return h, body, secret, signedAt.Add(6 * time.Minute)
		},
		"from the future": func() (http.Header, []byte, []byte, time.Time) {
			return h, body, secret, signedAt.Add(-6 * time.Minute)
		},
		"no headers": func() (http.Header, []byte, []byte, time.Time) { return http.Header{}, body, secret, signedAt },
		"timestamp moved": func() (http.Header, []byte, []byte, time.Time) {
			h2 := h.Clone()
			h2.Set(HeaderTimestamp, "1800000001") // signature no longer covers it
			return h2, body, secret, signedAt
		},
		"bare hex": func() (http.Header, []byte, []byte, time.Time) {
			h2 := h.Clone()
			h2.Set(HeaderSignature, h.Get(HeaderSignature)[len("sha256="):])
			return h2, body, secret, signedAt
		},
	}
	for name, c := range bad {
		hh, b, s, now := c()
		err := Verify(hh, b, s, now, 5*time.Minute)
		if !errors.Is(err, ErrSignature) {
			t.Errorf("%s: Verify = %v, want an ErrSignature", name, err)
		}
	}
}
