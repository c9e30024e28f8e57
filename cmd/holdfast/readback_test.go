package main

import (
	"bytes"
	"context"
	"encoding/json"
	"os"
	"path/filepath"
	"strings"
	"testing"
	"time"

	"holdfast/daemon"
	"holdfast/daemon/config"
	"holdfast/drivers/sim"
)

// Demo data: an invented 2-hour night of two gauges from 22:00, one sample
// every 10 s, with a 10 min gap from 23:00 in "cdg".
func nightCSV(t *testing.T) string {
	t.Helper()
	var b strings.Builder
	b.WriteString("gauge,time,value,raw\n")
	start := time.Date(2031, 3, 14, 22, 0, 0, 0, time.UTC)
	for i := 0; i < 720; i++ {
		at := start.Add(time.Duration(i) * 10 * time.Second)
		if i < 360 || i >= 420 {
			b.WriteString("cdg," + at.Format(time.RFC3339) + ",1.5e-3,0.4\n")
		}
		b.WriteString("wall," + at.Format(time.RFC3339) + ",24.5,1.1\n")
	}
	path := filepath.Join(t.TempDir(), "night.csv")
	if err := os.WriteFile(path, []byte(b.String()), 0o600); err != nil {
		t.Fatal(err)
	}
	return path
}

func runHF(t *testing.T, args ...string) (string, string, error) {
	t.Helper()
	var out, errb bytes.Buffer
	err := run(context.Background(), args, &out, &errb)
	return out.String(), errb.String(), err
}

// holdDir runs a daemon on dir until the test ends and returns its URL.
func holdDir(t *testing.T, dir string) string {
	t.Helper()
	cfg, err := config.ParseConfig("hold.yaml", []byte(`
chamber: {name: readback, volume: 30 L}
http: {listen: "127.0.0.1:0"}
store: {dir: `+dir+`}
links:
  bench:
    simulator:
      rough_pump: {speed: 5 m3/h, ultimate: 1 Pa}
      high_pump: {speed: 60 L/s, ultimate: 1e-6 Pa}
      crossover: 10 Pa
      outgassing: 2e-6 Pa*m3/s
      seed: 3
gauges:
  live: {link: bench, driver: sim, instrument: cdg, full_scale: 133 kPa, kind: pressure}
`))
	if err != nil {
		t.Fatal(err)
	}
	d, err := daemon.New(cfg, daemon.Options{Clock: sim.NewClock(time.Now(), 10)})
	if err != nil {
		t.Fatal(err)
	}
	ctx, cancel := context.WithCancel(context.Background())
	done := make(chan error, 1)
	go func() { done <- d.Run(ctx) }()
	t.Cleanup(func() { cancel(); <-done })
	return "http://" + d.Addr()
}

func TestImportQueryExportRoundTripOffline(t *testing.T) {
	dir, file := t.TempDir(), nightCSV(t)
	out, _, err := runHF(t, "import", "--data", dir, file)
	if err != nil || !strings.Contains(out, "imported 1380 samples") {
		t.Fatalf("import: %v\n%s", err, out)
	}
	out, errs, err := runHF(t, "query", "--data", dir, "--gauge", "cdg", "--from", "2031-03-14T22:00:00Z", "--to", "2031-03-15T00:00:00Z", "--points", "100", "--csv")
	if err != nil || !strings.Contains(errs, "read "+dir+" directly (no daemon holds it)") {
		t.Fatalf("query: %v\n%s", err, errs)
	}
	if !strings.Contains(out, "cdg,2031-03-14T22:59:50Z,610,,gap,") {
		t.Errorf("query CSV lacks the 10 min gap row after 22:59:50:\n%.400s", out)
	}
	out, _, err = runHF(t, "db", "stats", "--data", dir, "--json")
	var st map[string]any
	if err != nil || json.Unmarshal([]byte(out), &st) != nil {
		t.Fatalf("db stats: %v\n%s", err, out)
	}
	if st["samples"] != float64(1380) || st["payload_bytes"].(float64) <= 0 || st["file_bytes"].(float64) <= 0 {
		t.Errorf("db stats totals: samples %v, payload_bytes %v, file_bytes %v", st["samples"], st["payload_bytes"], st["file_bytes"])
	}
	exp := filepath.Join(t.TempDir(), "back.csv")
	if _, _, err := runHF(t, "export", "--data", dir, "--all", "-o", exp); err != nil {
		t.Fatal(err)
	}
	dir2 := t.TempDir()
	if _, _, err := runHF(t, "import", "--data", dir2, exp); err != nil {
		t.Fatal(err)
	}
	exp2 := filepath.Join(t.TempDir(), "again.csv")
	runHF(t, "export", "--data", dir2, "--all", "-o", exp2)
	a, _ := os.ReadFile(exp)
	b, _ := os.ReadFile(exp2)
	if len(a) == 0 || !bytes.Equal(a, b) {
		t.Errorf("export → import → export differs (%d and %d bytes)", len(a), len(b))
	}
	out, _, err = runHF(t, "db", "compact", "--data", dir)
	if err != nil || !strings.Contains(out, "compacted") {
		t.Fatalf("compact: %v\n%s", err, out)
	}
	if _, err := os.Stat(filepath.Join(dir, "holdfast.db.before-compact")); err != nil {
		t.Errorf("compact kept no previous file: %v", err)
	}
	out, _, _ = runHF(t, "db", "stats", "--data", dir, "--json")
	if !strings.Contains(out, `"samples": 1380`) {
		t.Errorf("after compact: %s", out)
	}
}

func TestCommandsOnADirectoryADaemonHolds(t *testing.T) {
	dir, file := t.TempDir(), nightCSV(t)
	if _, _, err := runHF(t, "import", "--data", dir, file); err != nil {
		t.Fatal(err)
	}
	base := holdDir(t, dir)
	out, errs, err := runHF(t, "query", "--data", dir, "--daemon", base, "--gauge", "wall", "--from", "2031-03-14T22:00:00Z", "--to", "2031-03-15T00:00:00Z", "--json")
	if err != nil || !strings.Contains(errs, "read through the running daemon at "+base+" (it holds "+dir+")") {
		t.Fatalf("query: %v\n%s", err, errs)
	}
	if !strings.Contains(out, `"value": 24.5`) {
		t.Errorf("query through the daemon:\n%.300s", out)
	}
	_, _, err = runHF(t, "import", "--data", dir, file)
	if err == nil || !strings.Contains(err.Error(), "a running daemon") || !strings.Contains(err.Error(), "stop it first") {
		t.Errorf("import under a daemon: %v; want a refusal saying a daemon holds it", err)
	}
	_, _, err = runHF(t, "db", "compact", "--data", dir)
	if err == nil || !strings.Contains(err.Error(), "a running daemon") {
		t.Errorf("compact under a daemon: %v; want a refusal", err)
	}
	out, _, err = runHF(t, "export", "--data", dir, "--daemon", base, "--gauge", "cdg")
	if err != nil || strings.Count(out, "\n") != 661 {
		t.Errorf("export through the daemon: %v, %d lines; want a header and 660 rows", err, strings.Count(out, "\n"))
	}
}

func TestImportOfAMalformedFileStoresNothing(t *testing.T) {
	dir := t.TempDir()
	path := filepath.Join(t.TempDir(), "bad.csv")
	os.WriteFile(path, []byte("gauge,time,value\ncdg,2031-03-14T22:00:00Z,1e-3\ncdg,2031-03-14T22:00:10Z,one\n"), 0o600)
	_, errs, err := runHF(t, "import", "--data", dir, path)
	if err == nil || !strings.Contains(errs, path+":3: value") || !strings.Contains(err.Error(), "nothing stored") {
		t.Fatalf("import: %v\n%s", err, errs)
	}
	out, _, _ := runHF(t, "db", "stats", "--data", dir, "--json")
	if !strings.Contains(out, `"samples": 0`) {
		t.Errorf("a malformed import stored something: %s", out)
	}
}
