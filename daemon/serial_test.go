package daemon

import (
	"bufio"
	"context"
	"fmt"
	"log/slog"
	"os"
	"path/filepath"
	"strings"
	"sync"
	"testing"
	"time"

	"github.com/creack/pty"

	"holdfast/daemon/config"
	"holdfast/drivers"
)

// fakeController plays a two-channel instrument of our own invention on a
// pty master: "BOTH\r" answers every channel, "L1:<p> L2:<p>\r\n", in mbar.
func fakeController(t *testing.T, link string, p1, p2 *float64, mu *sync.Mutex) (stop func()) {
	t.Helper()
	master, slave, err := pty.Open()
	if err != nil {
		t.Skipf("no pty here: %v", err)
	}
	name := slave.Name() // kept open until stop: with no slave open, reads on the master fail with EIO
	os.Remove(link)
	if err := os.Symlink(name, link); err != nil {
		t.Fatal(err)
	}
	done := make(chan struct{})
	go func() {
		defer close(done)
		r := bufio.NewReader(master)
		for {
			q, err := r.ReadString('\r')
			if err != nil {
				return
			}
			if strings.TrimSpace(q) != "BOTH" {
				fmt.Fprint(master, "what?\r\n")
				continue
			}
			mu.Lock()
			fmt.Fprintf(master, "L1:%.2E L2:%.2E\r\n", *p1, *p2)
			mu.Unlock()
		}
	}()
	return func() { master.Close(); slave.Close(); <-done }
}

// Two gauges fed by one query over a real serial line (a pty): values in
// mbar become pascals; pulling the cable takes both down (their quality
// no-reply) and plugging it back brings them up without a restart.
func TestSerialGaugesOverPty(t *testing.T) {
	dir := t.TempDir()
	dev := filepath.Join(dir, "ttyFAKE")
	var mu sync.Mutex
	p1, p2 := 2.5e-2, 4.0e-6
	stop := fakeController(t, dev, &p1, &p2, &mu)
	cfgText := fmt.Sprintf(`
chamber: {name: pty, volume: 10 L}
http: {listen: "127.0.0.1:0"}
store: {dir: %q}
links:
  bus: {serial: {device: %q, baud: 9600, timeout: 200ms, reconnect: {min: 20ms, max: 200ms}}}
gauges:
  rough:
    link: bus
    driver: ascii
    exchange: [{send: "BOTH\r", expect: 'L(?P<gauge>\d):(?P<value>\S+)'}]
    channel: "1"
    raw_unit: mbar
    kind: pressure
    interval: 100ms
  high: {link: bus, driver: ascii, from: rough, channel: "2", raw_unit: mbar, kind: pressure}
`, dir, dev)
	cfg, err := config.ParseConfig("pty.yaml", []byte(cfgText))
	if err != nil {
		t.Fatal(err)
	}
	d, err := New(cfg, Options{Log: slog.New(slog.NewTextHandler(t.Output(), nil))})
	if err != nil {
		t.Fatal(err)
	}
	ctx, cancel := context.WithCancel(context.Background())
	done := make(chan error, 1)
	go func() { done <- d.Run(ctx) }()
	defer func() {
		cancel()
		if err := <-done; err != nil {
			t.Errorf("Run: %v", err)
		}
	}()
	waitFor(t, 5*time.Second, "both gauges read", func() bool {
		m := scrape(t, d.Addr())
		return near(m["rough"], 2.5) && near(m["high"], 4.0e-4)
	})
	stop() // the cable is pulled
	waitFor(t, 5*time.Second, "both gauges down", func() bool { return len(scrape(t, d.Addr())) == 0 })
	// Their quality says so, not their last sample's ok.
	waitFor(t, 5*time.Second, "both gauges' quality no-reply", func() bool {
		text, _ := scrapeAs(t, d, textFormat)
		return hasLine(text, `holdfast_sensor_quality{gauge="rough",quality="no-reply"} 1`) &&
			hasLine(text, `holdfast_sensor_quality{gauge="high",quality="no-reply"} 1`)
	})
	mu.Lock()
	p1 = 3.0e-2
	mu.Unlock()
	stop = fakeController(t, dev, &p1, &p2, &mu) // plugged back, maybe as another tty
	defer stop()
	waitFor(t, 5*time.Second, "gauges back after replug", func() bool { return near(scrape(t, d.Addr())["rough"], 3.0) })
}

func near(got, want float64) bool { return got > want*(1-1e-9) && got < want*(1+1e-9) }

// waitFor polls cond against a real daemon (a real pty and HTTP server
// cannot run under synctest's fake clock).
func waitFor(t *testing.T, limit time.Duration, what string, cond func() bool) {
	t.Helper()
	for end := time.Now().Add(limit); time.Now().Before(end); time.Sleep(20 * time.Millisecond) {
		if cond() {
			return
		}
	}
	t.Fatalf("timed out waiting for %s", what)
}

// The RS-485 example of deploy/examples/bench.yaml works as shipped: its
// foreline exchange, checksum and status map read an instrument playing
// the invented protocol its comment describes. The sums, by hand from the
// ASCII codes of RFC 20, cover the bytes after '<' up to the digits:
// "02|fetch|" = 30+32+7C+66+65+74+63+68+7C = 0x364, so 64;
// "02|3.2E-01|good|" = 30+32+7C+33+2E+32+45+2D+30+31+7C (0x2C0)
// + 67+6F+6F+64+7C (0x225) = 0x4E5, so E5.
func TestBenchExampleRS485Exchange(t *testing.T) {
	master, slave, err := pty.Open()
	if err != nil {
		t.Skipf("no pty here: %v", err)
	}
	heard := make(chan string, 1)
	done := make(chan struct{})
	go func() {
		defer close(done)
		q, err := bufio.NewReader(master).ReadString('\r')
		heard <- q
		if err == nil && q == "<02|fetch|64>\r" {
			fmt.Fprint(master, "<02|3.2E-01|good|E5>\r\n")
		}
	}()
	defer func() { master.Close(); slave.Close(); <-done }()
	cfg, err := config.LoadConfig(filepath.Join("..", "deploy", "examples", "bench.yaml"))
	if err != nil {
		t.Fatal(err)
	}
	cfg.Links["rs485"].Serial.Device = slave.Name()
	p, err := OpenProbe(cfg, "foreline", nil, nil)
	if err != nil {
		t.Fatal(err)
	}
	defer p.Close()
	res := p.Read(context.Background())
	select {
	case q := <-heard: // sent before any reply, so here once Read has returned
		if q != "<02|fetch|64>\r" {
			t.Errorf("instrument heard %q, want <02|fetch|64>\\r", q)
		}
	default:
		t.Error("the instrument heard no request")
	}
	// 3.2E-01 mbar = 32 Pa (REFERENCES.md §1b: 1 mbar = 100 Pa).
	if res.Err != nil || res.Reading.Raw != 0.32 || res.Reading.Status != drivers.StatusOK || !near(res.Sample.Value, 32) {
		t.Errorf("foreline = %+v, %v; want 3.2E-01 mbar (32 Pa) ok", res, res.Err)
	}
}
