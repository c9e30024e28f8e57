package notify

import (
	"encoding/json"
	"errors"
	"io"
	"net/http"
	"net/http/httptest"
	"slices"
	"strings"
	"testing"
	"time"
)

func ptr(v float64) *float64 { return &v }

// exampleRaise is an invented transition on an invented chamber.
func exampleRaise() Transition {
	at := time.Date(2031, 3, 4, 2, 17, 5, 0, time.UTC)
	return Transition{Chamber: "bakeout-3", Alarm: "rough-vacuum-lost", Gauge: "chamber", Severity: "high",
		Event: EventRaised, State: StateUnacknowledged, Value: ptr(12.5), Limit: ptr(10), Unit: "Pa",
		Message: "chamber 12.5 Pa above 10 Pa for 30s", At: at, Since: at,
		DedupeKey: "bakeout-3/rough-vacuum-lost/raised/2031-03-04T02:17:05Z"}
}

// The body carries every documented field under its documented name, and
// the signature verifies with the receiver-side function.
func TestWebhookBodyAndSignature(t *testing.T) {
	secret := []byte("hook secret")
	var got struct {
		header http.Header
		body   []byte
	}
	srv := httptest.NewServer(http.HandlerFunc(func(w http.ResponseWriter, r *http.Request) {
		got.header = r.Header.Clone()
		got.body, _ = io.ReadAll(r.Body)
		if err := Verify(r.Header, got.body, secret, time.Now(), time.Minute); err != nil {
			http.Error(w, err.Error(), http.StatusUnauthorized)
			return
		}
		w.WriteHeader(http.StatusNoContent)
	}))
	defer srv.Close()
	clear := exampleRaise()
	clear.Event, clear.State, clear.Value, clear.Limit = EventCleared, StateNormal, nil, nil
	wh := &Webhook{URL: srv.URL, Secret: secret}
	if err := wh.Send(t.Context(), []Transition{exampleRaise(), clear}); err != nil {
		t.Fatalf("send: %v", err)
	}
	if ct := got.header.Get("Content-Type"); ct != "application/json" {
		t.Errorf("content type %q", ct)
	}
	var body map[string]any
	if err := json.Unmarshal(got.body, &body); err != nil {
		t.Fatal(err)
	}
	if body["schema"] != WebhookSchema || body["chamber"] != "bakeout-3" || body["sent_at"] == nil {
		t.Errorf("envelope: %v", body)
	}
	trs := body["transitions"].([]any)
	first, second := trs[0].(map[string]any), trs[1].(map[string]any)
	var keys []string
	for k := range first {
		keys = append(keys, k)
	}
	slices.Sort(keys)
	want := "alarm at chamber dedupe_key event gauge limit message quality reminder severity since state unit value"
	if strings.Join(keys, " ") != want {
		t.Errorf("transition fields:\n got %s\nwant %s", strings.Join(keys, " "), want)
	}
	if first["value"] != 12.5 || first["limit"] != 10.0 || first["at"] != "2031-03-04T02:17:05Z" {
		t.Errorf("first transition: %v", first)
	}
	if second["value"] != nil || second["limit"] != nil || second["state"] != "normal" {
		t.Errorf("unknown value and limit must be null: %v", second)
	}
}

// A refusal is a failure carrying the status and the receiver's words; a
// wrong secret is refused by Verify on the receiving side.
func TestWebhookRefused(t *testing.T) {
	srv := httptest.NewServer(http.HandlerFunc(func(w http.ResponseWriter, r *http.Request) {
		b, _ := io.ReadAll(r.Body)
		if err := Verify(r.Header, b, []byte("right"), time.Now(), time.Minute); err != nil {
			http.Error(w, "bad signature", http.StatusUnauthorized)
		}
	}))
	defer srv.Close()
	err := (&Webhook{URL: srv.URL, Secret: []byte("wrong")}).Send(t.Context(), []Transition{exampleRaise()})
	var se *StatusError
	if !errors.As(err, &se) || se.Code != 401 || se.Body != "bad signature" {
		t.Fatalf("got %v, want a 401 StatusError quoting the body", err)
	}
	if err := (&Webhook{URL: srv.URL, Secret: []byte("right")}).Send(t.Context(), []Transition{exampleRaise()}); err != nil {
		t.Errorf("right secret: %v", err)
	}
}
