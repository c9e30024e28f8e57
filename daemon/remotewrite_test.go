package daemon

import (
	"encoding/json"
	"fmt"
	"io"
	"math"
	"net"
	"net/http"
	"net/http/httptest"
	"net/url"
	"os"
	"os/exec"
	"path/filepath"
	"strconv"
	"strings"
	"sync"
	"syscall"
	"testing"
	"time"

	"holdfast/daemon/config"
	"holdfast/daemon/store"
	"holdfast/drivers/sim"
)

const remoteConfig = `
chamber: {name: rw-bench, volume: 30 L}
http: {listen: "127.0.0.1:0"}
store: {dir: DIR}
links:
  bench:
    simulator:
      rough_pump: {speed: 5 m3/h, ultimate: 1 Pa}
      high_pump: {speed: 60 L/s, ultimate: 1e-6 Pa}
      crossover: 10 Pa
      seed: 11
gauges:
  pirani: {link: bench, driver: sim, instrument: pirani, kind: pressure}
  cdg: {link: bench, driver: sim, instrument: cdg, full_scale: 133 kPa, kind: pressure}
  wall: {link: bench, driver: sim, instrument: thermocouple, kind: temperature, interval: 2s}
remote_write:
  url: URL
  every: 2s
  batch: 60
  retry: {min: 1s, max: 4s}
  labels: {site: north-hall}
`

// promServer is a real Prometheus with its remote-write receiver on.
type promServer struct {
	bin, dir, addr string
	cmd            *exec.Cmd
	done           chan error
}

func (p *promServer) start(t *testing.T) {
	t.Helper()
	cfg := filepath.Join(p.dir, "prometheus.yml")
	if err := os.WriteFile(cfg, []byte("global: {scrape_interval: 1m}\n"), 0o600); err != nil {
		t.Fatal(err)
	}
	p.cmd = exec.Command(p.bin, "--config.file="+cfg, "--storage.tsdb.path="+filepath.Join(p.dir, "data"),
		"--web.listen-address="+p.addr, "--web.enable-remote-write-receiver")
	log, err := os.OpenFile(filepath.Join(p.dir, "prometheus.log"), os.O_CREATE|os.O_APPEND|os.O_WRONLY, 0o600)
	if err != nil {
		t.Fatal(err)
	}
	p.cmd.Stdout, p.cmd.Stderr = log, log
	if err := p.cmd.Start(); err != nil {
		t.Fatal(err)
	}
	p.done = make(chan error, 1)
	go func() { p.done <- p.cmd.Wait(); log.Close() }()
	for deadline := time.Now().Add(10 * time.Second); time.Now().Before(deadline); {
		if resp, err := http.Get("http://" + p.addr + "/-/ready"); err == nil {
			resp.Body.Close()
			if resp.StatusCode == http.StatusOK {
				return
			}
		}
		time.Sleep(50 * time.Millisecond) // waiting for a real server to come up
	}
	p.stop(t)
	b, _ := os.ReadFile(filepath.Join(p.dir, "prometheus.log"))
	t.Fatalf("prometheus did not become ready:\n%s", b)
}

func (p *promServer) stop(t *testing.T) {
	t.Helper()
	if p.cmd == nil {
		return
	}
	_ = p.cmd.Process.Signal(syscall.SIGTERM)
	select {
	case <-p.done:
	case <-time.After(10 * time.Second):
		_ = p.cmd.Process.Kill()
		<-p.done
	}
	p.cmd = nil
}

// rangeSamples asks Prometheus for every raw sample of one series in the
// hour before at: an instant query of a range selector returns them as stored.
func (p *promServer) rangeSamples(t *testing.T, selector string, at time.Time) [][2]float64 {
	t.Helper()
	q := url.Values{"query": {selector + "[1h]"}, "time": {strconv.FormatFloat(float64(at.UnixMilli())/1e3, 'f', 3, 64)}}
	resp, err := http.Get("http://" + p.addr + "/api/v1/query?" + q.Encode())
	if err != nil {
		t.Fatal(err)
	}
	defer resp.Body.Close()
	body, _ := io.ReadAll(resp.Body)
	var r struct {
		Status string
		Data   struct {
			Result []struct {
				Metric map[string]string
				Values [][2]any
			}
		}
	}
	if err := json.Unmarshal(body, &r); err != nil || r.Status != "success" {
		t.Fatalf("query %s: %v %s", selector, err, body)
	}
	if len(r.Data.Result) != 1 {
		t.Fatalf("query %s: %d series, want 1: %s", selector, len(r.Data.Result), body)
	}
	if m := r.Data.Result[0].Metric; m["site"] != "north-hall" || m["chamber"] != "rw-bench" {
		t.Errorf("series labels %v; want site=north-hall and chamber=rw-bench (chamber.name by default)", m)
	}
	var out [][2]float64
	for _, v := range r.Data.Result[0].Values {
		ts, _ := v[0].(float64)
		val, err := strconv.ParseFloat(fmt.Sprint(v[1]), 64)
		if err != nil {
			t.Fatalf("value %v: %v", v[1], err)
		}
		out = append(out, [2]float64{math.Round(ts * 1e3), val})
	}
	return out
}

func freeAddr(t *testing.T) string {
	t.Helper()
	l, err := net.Listen("tcp", "127.0.0.1:0")
	if err != nil {
		t.Fatal(err)
	}
	defer l.Close()
	return l.Addr().String()
}

// metricValue reads one unlabelled metric from the daemon's /metrics.
func metricValue(t *testing.T, addr, name string) float64 {
	t.Helper()
	line := scrapeLine(t, addr, name+" ")
	v, err := strconv.ParseFloat(strings.TrimPrefix(line, name+" "), 64)
	if err != nil {
		t.Fatalf("metric %s: line %q: %v", name, line, err)
	}
	return v
}

// A daemon on the simulator pushes to a real Prometheus, which is stopped
// for a while in the middle of the run and started again on the same
// storage. Afterwards Prometheus holds exactly the samples the local store
// holds up to the cursor, outage included: same milliseconds, same values
// bit for bit, no hole and nothing extra.
//
// Times: Prometheus takes samples in order per series and, once its head
// has data, none older than about an hour before the newest (an in-order
// head without out_of_order_time_window). So the simulated clock starts 4
// minutes before now and runs at 20× for about 12 s of wall time: every
// sample is wall-plausible and in order.
func TestRemoteWriteReplaysOutage(t *testing.T) {
	bin, err := exec.LookPath("prometheus")
	if err != nil {
		t.Skip("prometheus not on PATH (Debian: apt-get install prometheus); remote write is not checked against a receiver")
	}
	prom := &promServer{bin: bin, dir: t.TempDir(), addr: freeAddr(t)}
	prom.start(t)
	defer prom.stop(t)

	dir := t.TempDir()
	writeURL := "http://" + prom.addr + "/api/v1/write"
	cfg, err := config.ParseConfig("rw.yaml", []byte(strings.NewReplacer("DIR", dir, "URL", writeURL).Replace(remoteConfig)))
	if err != nil {
		t.Fatal(err)
	}
	clock := sim.NewClock(time.Now().Add(-4*time.Minute), 20)
	d, err := New(cfg, Options{Clock: clock})
	if err != nil {
		t.Fatal(err)
	}
	stop := runInBackground(t, d)
	addr := d.Addr()
	waitFor(t, 10*time.Second, "the first accepted send", func() bool { return metricValue(t, addr, "holdfast_remote_write_samples_total") > 0 })
	time.Sleep(time.Second) // 20 s simulated, sent as it comes

	prom.stop(t)
	outFrom := clock.Now()
	failed := metricValue(t, addr, "holdfast_remote_write_failures_total")
	time.Sleep(3 * time.Second) // 60 s simulated with the receiver gone
	if f := metricValue(t, addr, "holdfast_remote_write_failures_total"); f <= failed {
		t.Errorf("failures %g after the outage, %g before; want the failed sends counted", f, failed)
	}
	if lag := metricValue(t, addr, "holdfast_remote_write_lag_seconds"); lag < 40 {
		t.Errorf("lag %g s after 60 simulated seconds of outage; want it to show the gap", lag)
	}
	outTo := clock.Now()
	prom.start(t)
	waitFor(t, 10*time.Second, "the gap to be replayed", func() bool { return metricValue(t, addr, "holdfast_remote_write_lag_seconds") < 5 })
	time.Sleep(500 * time.Millisecond)
	stop()

	db, err := store.Open(StorePath(dir), store.Options{ReadOnly: true})
	if err != nil {
		t.Fatal(err)
	}
	defer db.Close()
	cursors, err := db.Cursors(writeURL)
	if err != nil {
		t.Fatal(err)
	}
	for gauge, metric := range map[string]string{"pirani": "holdfast_pressure_pascals", "cdg": "holdfast_pressure_pascals", "wall": "holdfast_temperature_celsius"} {
		cur, ok := cursors[gauge]
		if !ok || !cur.After(outTo) {
			t.Errorf("%s: cursor %v; want it past the outage's end %v", gauge, cur, outTo)
			continue
		}
		var local [][2]float64
		inOutage := 0
		lastMs := int64(math.MinInt64)
		db.Range(gauge, time.Unix(0, 0), cur.Add(time.Nanosecond), func(p store.Point) bool {
			if ms := p.At.UnixMilli(); p.Quality == 0 && ms != lastMs {
				local = append(local, [2]float64{float64(ms), p.Value})
				lastMs = ms
				if p.At.After(outFrom) && p.At.Before(outTo) {
					inOutage++
				}
			}
			return true
		})
		central := prom.rangeSamples(t, fmt.Sprintf(`%s{gauge=%q}`, metric, gauge), cur.Add(time.Millisecond))
		t.Logf("%s: %d samples stored, %d of them during the outage; %d in Prometheus", gauge, len(local), inOutage, len(central))
		if inOutage < 20 {
			t.Errorf("%s: only %d samples stored during the outage; the test did not exercise it", gauge, inOutage)
		}
		if len(central) != len(local) {
			t.Errorf("%s: Prometheus holds %d samples, the local store %d up to the cursor", gauge, len(central), len(local))
		}
		for i := range min(len(central), len(local)) {
			if central[i] != local[i] {
				t.Errorf("%s: sample %d: Prometheus has %v, the store %v (ms, value)", gauge, i, central[i], local[i])
				break
			}
		}
	}
}

// Against a receiver written here: every request carries the bearer token
// from token_file; a 400 is final (the remote-write specification: a sender
// must not retry a 4xx other than 429), so its batch is counted as rejected
// and skipped; a 503 is retried, and the batch it refused is sent again.
func TestRemoteWriteRefusalsAndToken(t *testing.T) {
	dir := t.TempDir()
	tok := filepath.Join(dir, "rw.token")
	if err := os.WriteFile(tok, []byte("rw-secret-for-tests\n"), 0o600); err != nil {
		t.Fatal(err)
	}
	var mu sync.Mutex
	var answers []int
	var badAuth int
	srv := httptest.NewServer(http.HandlerFunc(func(w http.ResponseWriter, r *http.Request) {
		io.Copy(io.Discard, r.Body)
		mu.Lock()
		defer mu.Unlock()
		if r.Header.Get("Authorization") != "Bearer rw-secret-for-tests" {
			badAuth++
		}
		code := http.StatusNoContent
		switch len(answers) {
		case 0:
			code = http.StatusBadRequest
		case 1, 2:
			code = http.StatusServiceUnavailable
		}
		answers = append(answers, code)
		w.WriteHeader(code)
	}))
	defer srv.Close()
	text := strings.NewReplacer("DIR", dir, "URL", srv.URL+"/api/v1/write").Replace(remoteConfig)
	text = strings.Replace(text, "  labels: {site: north-hall}\n", "  labels: {site: north-hall}\n  token_file: "+tok+"\n", 1)
	cfg, err := config.ParseConfig("rw.yaml", []byte(text))
	if err != nil {
		t.Fatal(err)
	}
	d, err := New(cfg, Options{Clock: sim.NewClock(time.Now(), 20)})
	if err != nil {
		t.Fatal(err)
	}
	stop := runInBackground(t, d)
	waitFor(t, 10*time.Second, "accepted sends after the refusals", func() bool {
		return metricValue(t, d.Addr(), "holdfast_remote_write_samples_total") > 0
	})
	rejected := metricValue(t, d.Addr(), "holdfast_remote_write_samples_rejected_total")
	failures := metricValue(t, d.Addr(), "holdfast_remote_write_failures_total")
	stop()
	mu.Lock()
	defer mu.Unlock()
	if badAuth > 0 {
		t.Errorf("%d of %d requests lacked the bearer token", badAuth, len(answers))
	}
	if rejected < 1 || failures != 2 {
		t.Errorf("rejected %g samples, %g failures; want the first batch rejected and the two 503s counted", rejected, failures)
	}
}
