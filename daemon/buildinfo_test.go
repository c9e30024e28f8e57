package daemon

import (
	"runtime"
	"runtime/debug"
	"strings"
	"testing"

	"github.com/prometheus/client_golang/prometheus/testutil"
)

// The keys are the ones the go command stamps (runtime/debug documentation,
// BuildSetting: "vcs.revision", "vcs.modified"); the values are made up.
func TestBuildFromStamp(t *testing.T) {
	bi := &debug.BuildInfo{
		GoVersion: "go1.26.0",
		Main:      debug.Module{Path: "holdfast", Version: "v0.4.0"},
		Settings: []debug.BuildSetting{
			{Key: "vcs", Value: "git"},
			{Key: "vcs.revision", Value: "0123456789abcdef0123456789abcdef01234567"},
			{Key: "vcs.modified", Value: "true"},
		},
	}
	b := buildFrom(bi)
	if got, want := b.String(), "v0.4.0 revision 0123456789ab (modified) go1.26.0"; got != want {
		t.Errorf("version line %q, want %q", got, want)
	}
	want := `# HELP holdfast_build_info Always 1; labelled with the module version, VCS revision (modified: uncommitted changes at build time) and Go version holdfast was built with.
# TYPE holdfast_build_info gauge
holdfast_build_info{goarch="` + runtime.GOARCH + `",goos="` + runtime.GOOS + `",goversion="go1.26.0",modified="true",revision="0123456789abcdef0123456789abcdef01234567",version="v0.4.0"} 1
`
	if err := testutil.CollectAndCompare(buildInfoCollector(b), strings.NewReader(want)); err != nil {
		t.Error(err)
	}

	bi.Settings = bi.Settings[:2]
	if got, want := buildFrom(bi).String(), "v0.4.0 revision 0123456789ab go1.26.0"; got != want {
		t.Errorf("clean tree: version line %q, want %q", got, want)
	}
}
