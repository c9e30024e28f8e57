package main

import (
	"bytes"
	"context"
	"net"
	"os"
	"path/filepath"
	"strings"
	"syscall"
	"testing"
	"time"
)

// syncBuffer (identify_test.go) collects the daemon's log.

const hupConfig = `chamber: {name: hup, volume: 30 L}
http: {listen: "ADDR", token_file: DIR/token}
store: {dir: DIR}
links:
  bench: {simulator: {rough_pump: {speed: 5 m3/h, ultimate: 1 Pa}}}
gauges:
  pirani: {link: bench, driver: sim, instrument: pirani, kind: pressure}
`

// holdfast run reloads its config on a real SIGHUP, and holdfast reload
// prints what changed, or every problem with its line.
func TestRunReloadsOnHangup(t *testing.T) {
	dir := t.TempDir()
	ln, err := net.Listen("tcp", "127.0.0.1:0") // a free port for the daemon
	if err != nil {
		t.Fatal(err)
	}
	addr := ln.Addr().String()
	ln.Close()
	tok := filepath.Join(dir, "token")
	os.WriteFile(tok, []byte("a-hangup-test-token-long-enough\n"), 0o600)
	path := filepath.Join(dir, "holdfast.yaml")
	write := func(text string) {
		text = strings.NewReplacer("DIR", dir, "ADDR", addr).Replace(text)
		if err := os.WriteFile(path, []byte(text), 0o644); err != nil {
			t.Fatal(err)
		}
	}
	write(hupConfig)
	logs := &syncBuffer{}
	ctx, cancel := context.WithCancel(context.Background())
	done := make(chan error, 1)
	go func() { done <- run(ctx, []string{"run", "--config", path}, &bytes.Buffer{}, logs) }()
	defer func() {
		cancel()
		if err := <-done; err != nil {
			t.Errorf("run: %v", err)
		}
	}()
	waitLog := func(what string) {
		t.Helper()
		for end := time.Now().Add(10 * time.Second); time.Now().Before(end); time.Sleep(20 * time.Millisecond) {
			if strings.Contains(logs.String(), what) {
				return
			}
		}
		t.Fatalf("no %q in the log:\n%s", what, logs)
	}
	waitLog("daemon started") // the SIGHUP handler is in place before Run

	write(hupConfig + "  ion: {link: bench, driver: sim, instrument: ion, kind: pressure}\n")
	if err := syscall.Kill(os.Getpid(), syscall.SIGHUP); err != nil {
		t.Fatal(err)
	}
	waitLog(`msg="config reloaded"`)
	waitLog(`changes="gauges added: ion"`)

	write(hupConfig + "  wall: {link: bench, driver: sim, instrument: thermocouple, kind: temperature, interval: 1ms}\n")
	var out, errOut bytes.Buffer
	err = run(context.Background(), []string{"reload", "--daemon", "http://" + addr, "--token-file", tok}, &out, &errOut)
	if err == nil {
		t.Fatal("reload of a bad config succeeded")
	}
	if want := path + ":8: gauges.wall.interval"; !strings.Contains(errOut.String(), want) {
		t.Errorf("reload's problems lack %q:\n%s", want, errOut.String())
	}

	write(hupConfig)
	out.Reset()
	if err := run(context.Background(), []string{"reload", "--daemon", "http://" + addr, "--token-file", tok}, &out, &errOut); err != nil {
		t.Fatalf("reload: %v\n%s", err, errOut.String())
	}
	if !strings.Contains(out.String(), "gauges removed: ion") {
		t.Errorf("reload printed %q; want the removed gauge", out.String())
	}
}
