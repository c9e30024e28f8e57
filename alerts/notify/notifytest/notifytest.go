// Package notifytest runs a real Alertmanager for tests of the notifiers:
// the binary from Debian's prometheus-alertmanager package when it is on
// PATH, on 127.0.0.1 with a free port and a temporary storage path. Tests
// that need it skip when it is absent. Only _test files import it.
package notifytest

import (
	"bytes"
	"context"
	"encoding/json"
	"fmt"
	"net"
	"net/http"
	"os"
	"os/exec"
	"path/filepath"
	"testing"
	"time"
)

// minimalConfig routes everything to a receiver that sends nowhere: the
// tests read alerts back through the API.
const minimalConfig = "route:\n  receiver: nowhere\nreceivers:\n  - name: nowhere\n"

// Alertmanager starts a real Alertmanager and returns its base URL. It
// skips the test when no binary is on PATH and stops the process at the
// end of the test.
func Alertmanager(t testing.TB) string {
	t.Helper()
	bin := ""
	for _, name := range []string{"alertmanager", "prometheus-alertmanager"} {
		if p, err := exec.LookPath(name); err == nil {
			bin = p
			break
		}
	}
	if bin == "" {
		t.Skip("no alertmanager on PATH (Debian: apt-get install prometheus-alertmanager)")
	}
	dir := t.TempDir()
	cfg := filepath.Join(dir, "alertmanager.yml")
	if err := os.WriteFile(cfg, []byte(minimalConfig), 0o600); err != nil {
		t.Fatal(err)
	}
	addr := freeAddr(t)
	var out bytes.Buffer
	cmd := exec.Command(bin, "--config.file="+cfg, "--storage.path="+filepath.Join(dir, "data"),
		"--web.listen-address="+addr, "--cluster.listen-address=")
	cmd.Stdout, cmd.Stderr = &out, &out
	if err := cmd.Start(); err != nil {
		t.Fatalf("start %s: %v", bin, err)
	}
	t.Cleanup(func() {
		cmd.Process.Kill()
		cmd.Wait()
	})
	base := "http://" + addr
	deadline := time.Now().Add(30 * time.Second)
	for {
		resp, err := http.Get(base + "/-/ready")
		if err == nil {
			resp.Body.Close()
			if resp.StatusCode == http.StatusOK {
				return base
			}
		}
		if time.Now().After(deadline) {
			t.Fatalf("alertmanager on %s not ready after 30 s: %v\n%s", addr, err, out.String())
		}
		time.Sleep(50 * time.Millisecond)
	}
}

func freeAddr(t testing.TB) string {
	t.Helper()
	ln, err := net.Listen("tcp", "127.0.0.1:0")
	if err != nil {
		t.Fatal(err)
	}
	defer ln.Close()
	return ln.Addr().String()
}

// An Alert is one alert as GET /api/v2/alerts returns it (gettableAlert
// in Alertmanager's api/v2/openapi.yaml), the fields the tests read.
type Alert struct {
	Labels       map[string]string `json:"labels"`
	Annotations  map[string]string `json:"annotations"`
	StartsAt     time.Time         `json:"startsAt"`
	EndsAt       time.Time         `json:"endsAt"`
	GeneratorURL string            `json:"generatorURL"`
	Status       struct {
		State string `json:"state"` // active, suppressed, unprocessed
	} `json:"status"`
}

// Alerts lists the alerts Alertmanager holds, resolved ones included.
func Alerts(ctx context.Context, base string) ([]Alert, error) {
	req, err := http.NewRequestWithContext(ctx, http.MethodGet, base+"/api/v2/alerts?active=true&silenced=true&inhibited=true&unprocessed=true", nil)
	if err != nil {
		return nil, err
	}
	resp, err := http.DefaultClient.Do(req)
	if err != nil {
		return nil, err
	}
	defer resp.Body.Close()
	if resp.StatusCode != http.StatusOK {
		return nil, fmt.Errorf("GET /api/v2/alerts: %s", resp.Status)
	}
	var out []Alert
	return out, json.NewDecoder(resp.Body).Decode(&out)
}
