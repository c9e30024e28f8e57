package config

import (
	"holdfast/daemon/config/configtest"
	"strconv"
	"strings"
	"testing"
)

// Every problem of a remote_write section is reported at once, each on
// its own line of the file.
func TestRemoteWriteConfigProblems(t *testing.T) {
	text := strings.Replace(configtest.NotifyBase, "DIR", t.TempDir(), 1) + `remote_write:
  url: ftp://central.example.internal/write
  every: 10ms
  batch: -5
  token_file: /a/token
  credential: rw-token
  labels: {gauge: x, 9lives: y, site: ""}
`
	_, err := ParseConfig("rw.yaml", []byte(text))
	if err == nil {
		t.Fatal("ParseConfig succeeded; want problems")
	}
	base := strings.Count(configtest.NotifyBase, "\n") + 1 // the line of remote_write:
	for _, want := range []string{
		"rw.yaml:" + itoa(base+1) + ": remote_write.url: want the receiver's http:// or https:// write URL",
		"rw.yaml:" + itoa(base+2) + ": remote_write.every: want at least 100ms",
		"rw.yaml:" + itoa(base+3) + ": remote_write.batch: want 1 to 100000 samples per request, got -5",
		"rw.yaml:" + itoa(base) + ": remote_write: give token_file or credential, not both",
		"remote_write.labels.gauge: \"gauge\" is set by holdfast",
		"remote_write.labels.9lives: \"9lives\" is not a label name",
		"remote_write.labels.site: empty value",
	} {
		if !strings.Contains(err.Error(), want) {
			t.Errorf("problems lack %q:\n%v", want, err)
		}
	}
}

func itoa(n int) string { return strconv.Itoa(n) }
