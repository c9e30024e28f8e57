package store

import (
	"bufio"
	"fmt"
	"os"
	"os/exec"
	"path/filepath"
	"strconv"
	"strings"
	"syscall"
	"testing"
	"time"
)

// crashEnv names the store file a helper process writes to.
const crashEnv = "HOLDFAST_STORE_CRASH_HELPER"

// TestHelperProcess is not a test: run by TestSIGKILLLosesOnlyUnflushedPoints
// in a child process, it appends and flushes until it is killed, printing
// after each flush how many points per series are on disk.
func TestHelperProcess(t *testing.T) {
	path := os.Getenv(crashEnv)
	if path == "" {
		t.Skip("helper for TestSIGKILLLosesOnlyUnflushedPoints")
	}
	db, err := Open(path, Options{})
	if err != nil {
		fmt.Println("open:", err)
		os.Exit(2)
	}
	deadline := time.Now().Add(30 * time.Second) // never outlive a vanished parent
	for i := 0; time.Now().Before(deadline); {
		for range 37 { // not a divisor of the chunk size: flushes land mid-chunk
			crashPoint(db, i)
			i++
		}
		if err := db.Flush(); err != nil {
			fmt.Println("flush:", err)
			os.Exit(2)
		}
		fmt.Println("flushed", i)
	}
	os.Exit(3)
}

// crashSeries are the helper's series.
var crashSeries = []string{"foreline", "heater-tc"}

// crashValue is point i of a helper series; it depends on i alone.
func crashValue(series string, i int) Point {
	at := nightStart.Add(time.Duration(i) * time.Second)
	if series == "foreline" {
		return Point{At: at, Raw: float64(i) * 1e-3, Value: float64(i) * 0.1}
	}
	return Point{At: at, Raw: 20 + float64(i%500)/10, Value: float64(i), Calibration: 3}
}

// crashPoint appends point i of each helper series.
func crashPoint(db *DB, i int) {
	for _, s := range crashSeries {
		db.Append(s, crashValue(s, i))
	}
}

func TestSIGKILLLosesOnlyUnflushedPoints(t *testing.T) {
	path := filepath.Join(t.TempDir(), "crash.db")
	cmd := exec.Command(os.Args[0], "-test.run=^TestHelperProcess$")
	cmd.Env = append(os.Environ(), crashEnv+"="+path)
	out, err := cmd.StdoutPipe()
	if err != nil {
		t.Fatal(err)
	}
	if err := cmd.Start(); err != nil {
		t.Fatal(err)
	}
	flushed := 0
	sc := bufio.NewScanner(out)
	for flushed < 5000 && sc.Scan() {
		n, ok := strings.CutPrefix(sc.Text(), "flushed ")
		if !ok {
			t.Fatalf("helper: %s", sc.Text())
		}
		flushed, _ = strconv.Atoi(n)
	}
	if err := cmd.Process.Signal(syscall.SIGKILL); err != nil {
		t.Fatal(err)
	}
	cmd.Wait()
	if flushed < 5000 {
		t.Fatalf("helper stopped after %d points", flushed)
	}

	db, err := Open(path, Options{})
	if err != nil {
		t.Fatalf("reopen after SIGKILL: %v", err)
	}
	defer db.Close()
	for _, series := range crashSeries {
		got := all(t, db, series)
		if len(got) < flushed { // more is fine: a flush may commit before its line is read
			t.Fatalf("%s: %d points after the crash, but %d were reported flushed", series, len(got), flushed)
		}
		want := make([]Point, len(got))
		for i := range want {
			want[i] = crashValue(series, i)
		}
		samePoints(t, got, want)
	}
	crashPoint(db, 1<<20) // and the file takes new writes
	if err := db.Flush(); err != nil {
		t.Fatalf("flush after the crash: %v", err)
	}
}
