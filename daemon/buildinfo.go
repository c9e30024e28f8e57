package daemon

import (
	"runtime"
	"runtime/debug"
	"strconv"
	"strings"

	"github.com/prometheus/client_golang/prometheus"
)

// Build says which holdfast this is: the module version the binary was built
// at ("(devel)" for a build from a checkout) and, when it was built inside a
// git checkout, the commit and whether the tree had uncommitted changes.
type Build struct {
	Version   string // module version, e.g. v0.4.0; "(devel)" from a checkout
	Revision  string // full commit hash; empty when the build had no VCS stamp
	Modified  bool   // the tree had uncommitted changes at build time
	GoVersion string
}

// ReadBuild reads the running binary's build information.
func ReadBuild() Build {
	bi, ok := debug.ReadBuildInfo()
	if !ok {
		return Build{GoVersion: runtime.Version()}
	}
	return buildFrom(bi)
}

func buildFrom(bi *debug.BuildInfo) Build {
	b := Build{Version: bi.Main.Version, GoVersion: bi.GoVersion}
	for _, s := range bi.Settings {
		switch s.Key {
		case "vcs.revision":
			b.Revision = s.Value
		case "vcs.modified":
			b.Modified = s.Value == "true"
		}
	}
	if b.GoVersion == "" {
		b.GoVersion = runtime.Version()
	}
	return b
}

// String is the one-line form holdfast version prints:
// "v0.4.0 revision 0123456789ab (modified) go1.26.0".
func (b Build) String() string {
	parts := []string{b.Version}
	if b.Version == "" {
		parts[0] = "(unknown version)"
	}
	if b.Revision != "" {
		r := b.Revision
		if len(r) > 12 {
			r = r[:12]
		}
		parts = append(parts, "revision "+r)
		if b.Modified {
			parts = append(parts, "(modified)")
		}
	}
	parts = append(parts, b.GoVersion)
	return strings.Join(parts, " ")
}

// buildInfoCollector exports holdfast_build_info, always 1, labelled with b.
func buildInfoCollector(b Build) prometheus.Collector {
	return prometheus.NewGaugeFunc(prometheus.GaugeOpts{
		Name: "holdfast_build_info",
		Help: "Always 1; labelled with the module version, VCS revision (modified: uncommitted changes at build time) and Go version holdfast was built with.",
		ConstLabels: prometheus.Labels{
			"version":   b.Version,
			"revision":  b.Revision,
			"modified":  strconv.FormatBool(b.Modified),
			"goversion": b.GoVersion,
			"goos":      runtime.GOOS,
			"goarch":    runtime.GOARCH,
		},
	}, func() float64 { return 1 })
}
