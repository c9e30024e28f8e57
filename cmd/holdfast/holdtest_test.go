package main

import (
	"encoding/json"
	"fmt"
	"net/http"
	"net/http/httptest"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"holdfast/daemon"
)

// holdtest show --svg says where it wrote the plot and how big it is, on
// stdout in text mode and on stderr with --json (stdout stays JSON).
func TestHoldtestShowSVGSaysWhatItWrote(t *testing.T) {
	plot := `<svg xmlns="http://www.w3.org/2000/svg"><path d="M0 0L10 10"/></svg>`
	srv := httptest.NewServer(http.HandlerFunc(func(w http.ResponseWriter, r *http.Request) {
		switch r.URL.Path {
		case "/api/v1/holdtests/000007":
			json.NewEncoder(w).Encode(daemon.HoldTestJSON{ID: "000007", Gauge: "fore", State: "done"})
		case "/api/v1/holdtests/000007/rise.svg":
			fmt.Fprint(w, plot)
		default:
			http.NotFound(w, r)
		}
	}))
	defer srv.Close()
	file := filepath.Join(t.TempDir(), "rise.svg")
	want := fmt.Sprintf("wrote the plot of hold test 000007 to %s (%d bytes)", file, len(plot))

	out, errs, err := runCmd(t, "holdtest", "show", "000007", "--svg", file, "--daemon", srv.URL)
	if err != nil {
		t.Fatalf("show: %v\n%s", err, errs)
	}
	if !strings.Contains(out, want) {
		t.Errorf("stdout lacks %q:\n%s", want, out)
	}
	if b, _ := os.ReadFile(file); string(b) != plot {
		t.Errorf("file holds %q", b)
	}

	out, errs, err = runCmd(t, "holdtest", "show", "000007", "--svg", file, "--json", "--daemon", srv.URL)
	if err != nil {
		t.Fatalf("show --json: %v\n%s", err, errs)
	}
	if !strings.Contains(errs, want) || !json.Valid([]byte(out)) {
		t.Errorf("--json: stderr %q, want %q; stdout must be JSON:\n%s", errs, want, out)
	}
}
