package config

import (
	"net/url"
	"regexp"
	"strings"
	"time"
)

// RemoteWriteConfig is the remote_write: section: push every stored sample
// to a Prometheus remote-write receiver, for a chamber the central server
// cannot scrape (a lab PC behind a firewall). A cursor per series kept in
// the data file says what the receiver has accepted, so an outage of the
// network or the receiver is replayed once it is back.
type RemoteWriteConfig struct {
	URL        string            `yaml:"url"`        // the receiver's write endpoint, e.g. https://metrics.example.internal/api/v1/write
	Every      Duration          `yaml:"every"`      // time between sends; default 15s
	Batch      int               `yaml:"batch"`      // samples per request at most; default 2000
	Timeout    Duration          `yaml:"timeout"`    // per request; default 10s
	TokenFile  string            `yaml:"token_file"` // bearer token, read at start
	Credential string            `yaml:"credential"` // or: a systemd credential name (LoadCredential=), read from $CREDENTIALS_DIRECTORY
	Labels     map[string]string `yaml:"labels"`     // added to every series; chamber defaults to chamber.name
	Backfill   Duration          `yaml:"backfill"`   // on the first send to this URL, also send this much stored history; default 0
	Retry      RetryConfig       `yaml:"retry"`      // backoff after a failed send; default 1s doubling to 5 min

	Token string `yaml:"-"` // read by the checker
}

// Remote-write defaults and bounds.
const (
	defaultRemoteEvery    = 15 * time.Second
	defaultRemoteBatch    = 2000
	maxRemoteBatch        = 100000
	defaultRemoteTimeout  = 10 * time.Second
	defaultRemoteRetryMin = time.Second
	defaultRemoteRetryMax = 5 * time.Minute
	minRemoteEvery        = 100 * time.Millisecond
)

// labelName is a Prometheus label name (the data model's rule).
var labelName = regexp.MustCompile(`^[a-zA-Z_][a-zA-Z0-9_]*$`)

// remoteWrite checks the remote_write: section and fills its defaults.
func (v *checker) remoteWrite(r *RemoteWriteConfig) {
	if r == nil {
		return
	}
	const p = "remote_write"
	u, err := url.Parse(r.URL)
	v.expect(r.URL != "" && err == nil && (u.Scheme == "http" || u.Scheme == "https") && u.Host != "" && u.User == nil, p+".url",
		"want the receiver's http:// or https:// write URL without credentials, such as https://metrics.example.internal/api/v1/write, got %s", shownURL(r.URL))
	if r.Every == 0 {
		r.Every = Duration(defaultRemoteEvery)
	}
	v.expect(r.Every.D() >= minRemoteEvery, p+".every", "want at least %s, such as every: 15s, got %s", shortDuration(minRemoteEvery), shortDuration(r.Every.D()))
	if r.Batch == 0 {
		r.Batch = defaultRemoteBatch
	}
	v.expect(r.Batch > 0 && r.Batch <= maxRemoteBatch, p+".batch", "want 1 to %d samples per request, got %d", maxRemoteBatch, r.Batch)
	if r.Timeout == 0 {
		r.Timeout = Duration(defaultRemoteTimeout)
	}
	v.expect(r.Timeout > 0, p+".timeout", "must be positive, got %s", shortDuration(r.Timeout.D()))
	v.expect(r.Backfill >= 0, p+".backfill", "must not be negative, got %s", shortDuration(r.Backfill.D()))
	if r.Retry.Min == 0 {
		r.Retry.Min = Duration(defaultRemoteRetryMin)
	}
	if r.Retry.Max == 0 {
		r.Retry.Max = Duration(max(defaultRemoteRetryMax, r.Retry.Min.D()))
	}
	v.expect(r.Retry.Min.D() >= minRetry, p+".retry.min", "want at least %s, got %s", shortDuration(minRetry), shortDuration(r.Retry.Min.D()))
	v.expect(r.Retry.Max >= r.Retry.Min, p+".retry.max", "must not be less than retry.min (%s), got %s", shortDuration(r.Retry.Min.D()), shortDuration(r.Retry.Max.D()))
	v.remoteToken(r)
	if r.Labels == nil {
		r.Labels = map[string]string{}
	}
	for _, k := range sortedKeys(r.Labels) {
		path := p + ".labels." + k
		switch {
		case !labelName.MatchString(k) || strings.HasPrefix(k, "__"):
			v.problem(path, "%q is not a label name: use letters, digits and '_', not starting with a digit or '__'", k)
		case k == "gauge" || k == "job" || k == "instance":
			v.problem(path, "%q is set by holdfast or the receiver; choose another label (site, chamber, building)", k)
		case r.Labels[k] == "":
			v.problem(path, "empty value; give the label a value or remove it")
		}
	}
	if _, ok := r.Labels["chamber"]; !ok && v.cfg.Chamber.Name != "" {
		r.Labels["chamber"] = v.cfg.Chamber.Name
	}
}

// remoteToken reads the bearer token from token_file or a systemd
// credential, with the same checks as every other secret.
func (v *checker) remoteToken(r *RemoteWriteConfig) {
	if r.TokenFile == "" && r.Credential == "" {
		return // the receiver needs no token
	}
	r.Token = string(v.secret(secretRef{path: "remote_write", fileKey: "token_file", credKey: "credential",
		file: r.TokenFile, credential: r.Credential, required: true}))
}
