package daemon

import (
	"encoding/json"
	"io"
	"net/http"
	"strings"
	"testing"
)

// postRaw sends body as it is and returns the status and the reply.
func postRaw(t *testing.T, d *Daemon, path, token, body string) (int, string) {
	t.Helper()
	req, _ := http.NewRequest("POST", "http://"+d.Addr()+path, strings.NewReader(body))
	req.Header.Set("Authorization", "Bearer "+token)
	resp, err := http.DefaultClient.Do(req)
	if err != nil {
		t.Fatal(err)
	}
	defer resp.Body.Close()
	b, _ := io.ReadAll(resp.Body)
	var e struct{ Error string }
	if json.Unmarshal(b, &e) == nil && e.Error != "" {
		return resp.StatusCode, e.Error
	}
	return resp.StatusCode, string(b)
}

// A request the caller got wrong is a 400 that says what is wrong: a
// shelving time that does not read (it was a 409, "conflict", as if the
// alarm's state were at fault), and a field the endpoint does not know (a
// misspelt "reason" was silently dropped), named with the known ones.
func TestAPIBodiesRefuseBadInput(t *testing.T) {
	const token = "body-token-0123456789"
	d := startShelveDaemon(t, token)
	for _, c := range []struct {
		path, body string
		want       []string // in the reply
	}{
		{"/api/v1/alarms/rough-lost/shelve", `{"reason": "x", "for": "a while"}`, []string{"for", "2h"}},
		{"/api/v1/alarms/rough-lost/shelve", `{"reason": "x", "until": "tomorrow"}`, []string{"until", "RFC 3339"}},
		{"/api/v1/alarms/rough-lost/shelve", `{"reason": "x", "for": "1h", "until": "2031-01-01T00:00:00Z"}`, []string{"not both"}},
		{"/api/v1/alarms/rough-lost/shelve", `{"reson": "pump swap", "for": "1h"}`, []string{`"reson"`, "reason"}},
		{"/api/v1/alarms/rough-lost/ack", `{"by": "night shift", "comment": "seen"}`, []string{`"comment"`, "by"}},
		{"/api/v1/isolation", `{"isolated": true, "why": "leak check"}`, []string{`"why"`, "isolated"}},
		{"/api/v1/holdtests", `{"gauge": "pirani", "duraton": "5m"}`, []string{`"duraton"`, "duration"}},
		{"/api/v1/calibrations/points", `{"gauge": "pirani", "rwa": 1}`, []string{`"rwa"`}},
	} {
		code, reply := postRaw(t, d, c.path, token, c.body)
		if code != http.StatusBadRequest {
			t.Errorf("POST %s %s: %d %s; want 400", c.path, c.body, code, reply)
			continue
		}
		for _, w := range c.want {
			if !strings.Contains(reply, w) {
				t.Errorf("POST %s %s: reply %s does not say %s", c.path, c.body, reply, w)
			}
		}
	}
	if s := d.alarms.Status()[0]; s.State == "shelved" {
		t.Errorf("a refused shelve request shelved the alarm")
	}
}
