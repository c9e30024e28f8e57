package notify

import (
	"context"
	"net"
	"net/http"
	"net/http/httptest"
	"strings"
	"testing"
	"time"
)

// A notifier URL may carry a secret in its userinfo or its query (a
// ?token= many receivers ask for). Every error that names the URL (what
// the daemon logs on each failed delivery) shows neither, for a refusal, a
// dead receiver and a URL that does not parse.
func TestErrorsRedactNotifierURLs(t *testing.T) {
	srv := httptest.NewServer(http.HandlerFunc(func(w http.ResponseWriter, r *http.Request) {
		http.Error(w, "down for maintenance", http.StatusServiceUnavailable)
	}))
	defer srv.Close()
	ln, err := net.Listen("tcp", "127.0.0.1:0")
	if err != nil {
		t.Fatal(err)
	}
	dead := ln.Addr().String()
	ln.Close()
	host := strings.TrimPrefix(srv.URL, "http://")
	for _, c := range []struct{ name, url string }{
		{"refused", "http://hookuser:hookpass@" + host + "/hook?token=s3cr3t-t0ken&team=vac"},
		{"no receiver", "http://hookuser:hookpass@" + dead + "/hook?token=s3cr3t-t0ken"},
		{"unparsable", "http://hookuser:hookpass@" + host + "/hook?token=s3cr3t-t0ken&bad=%zz\x7f"},
	} {
		t.Run(c.name, func(t *testing.T) {
			ctx, cancel := context.WithTimeout(context.Background(), 5*time.Second)
			defer cancel()
			tr := []Transition{{Chamber: "c", Alarm: "a", DedupeKey: "c/a/1/unacknowledged"}}
			errs := []error{(&Webhook{URL: c.url}).Send(ctx, tr),
				(&Alertmanager{URL: c.url}).Post(ctx, []AMAlert{{Labels: map[string]string{"alertname": "a"}}})}
			for i, err := range errs {
				if err == nil {
					t.Fatalf("notifier %d: no error", i)
				}
				for _, secret := range []string{"hookpass", "hookuser", "s3cr3t-t0ken"} {
					if strings.Contains(err.Error(), secret) {
						t.Errorf("notifier %d: error shows %q: %v", i, secret, err)
					}
				}
				if c.name != "unparsable" && !strings.Contains(err.Error(), "/hook") {
					t.Errorf("notifier %d: error %v does not say which receiver", i, err)
				}
			}
		})
	}
	if got, want := RedactURL("https://u:p@hooks.example.internal/x?token=abc&team=vac#frag"),
		"https://xxxxx@hooks.example.internal/x?team=xxxxx&token=xxxxx#frag"; got != want {
		t.Errorf("RedactURL: %s, want %s", got, want)
	}
}
