package notify

import (
	"bytes"
	"context"
	"encoding/json"
	"errors"
	"fmt"
	"io"
	"net/http"
	"net/url"
	"time"
)

// WebhookSchema names the body's format; it changes only when a field
// changes meaning or goes away (new fields may be added within a version).
const WebhookSchema = "holdfast.notify/v1"

// WebhookBody is the JSON a Webhook posts.
type WebhookBody struct {
	Schema      string       `json:"schema"`      // WebhookSchema
	Chamber     string       `json:"chamber"`     // the daemon's chamber.name
	SentAt      time.Time    `json:"sent_at"`     // when this attempt was made (retries differ)
	Transitions []Transition `json:"transitions"` // in the order they happened; one or more
}

// A Webhook posts each batch as a signed WebhookBody to URL.
type Webhook struct {
	URL    string
	Secret []byte           // shared with the receiver; empty sends no signature
	Client *http.Client     // nil: a plain client; the caller's ctx bounds each request
	Now    func() time.Time // signature time; nil is time.Now
}

// Send posts the batch. Any 2xx reply is delivery; anything else, or no
// reply, is a failure to retry.
func (w *Webhook) Send(ctx context.Context, batch []Transition) error {
	if len(batch) == 0 {
		return nil
	}
	now := time.Now
	if w.Now != nil {
		now = w.Now
	}
	at := now()
	body, err := json.Marshal(WebhookBody{Schema: WebhookSchema, Chamber: batch[0].Chamber, SentAt: at.UTC(), Transitions: batch})
	if err != nil {
		return fmt.Errorf("webhook body: %w", err)
	}
	target, err := requestURL(w.URL)
	if err != nil {
		return fmt.Errorf("webhook: %w", err)
	}
	req, err := http.NewRequestWithContext(ctx, http.MethodPost, target, bytes.NewReader(body))
	if err != nil {
		return fmt.Errorf("webhook: %w", err)
	}
	req.Header.Set("Content-Type", "application/json")
	req.Header.Set("User-Agent", "holdfast")
	if len(w.Secret) > 0 {
		Sign(req.Header, w.Secret, at.Unix(), body)
	}
	return do(w.Client, req)
}

// do sends req and turns any non-2xx reply into an error quoting the
// start of the reply.
func do(c *http.Client, req *http.Request) error {
	if c == nil {
		c = &http.Client{}
	}
	resp, err := c.Do(req)
	if err != nil {
		var ue *url.Error
		if errors.As(err, &ue) {
			ue.URL = redact(req.URL) // net/http hides only the password
		}
		return err
	}
	defer resp.Body.Close()
	snippet, _ := io.ReadAll(io.LimitReader(resp.Body, 256))
	io.Copy(io.Discard, io.LimitReader(resp.Body, 64<<10)) // let the connection be reused
	if resp.StatusCode/100 != 2 {
		return &StatusError{URL: redact(req.URL), Code: resp.StatusCode, Body: string(bytes.TrimSpace(snippet))}
	}
	return nil
}

// A StatusError is a receiver's refusal: a reply that is not 2xx.
type StatusError struct {
	URL  string // redacted (RedactURL)
	Code int
	Body string // the reply's first bytes
}

// Permanent reports whether sending the same request again cannot
// succeed: a 4xx answer, except 408 Request Timeout and 429 Too Many
// Requests, says the request itself is at fault (RFC 9110 §15.5, §15.5.9;
// RFC 6585 §4), so retrying it unchanged only blocks the queue behind it.
func (e *StatusError) Permanent() bool {
	return e.Code/100 == 4 && e.Code != http.StatusRequestTimeout && e.Code != http.StatusTooManyRequests
}

func (e *StatusError) Error() string {
	msg := fmt.Sprintf("%s: %d %s", e.URL, e.Code, http.StatusText(e.Code))
	if e.Body != "" {
		msg += ": " + e.Body
	}
	return msg
}
