package daemon

import (
	"bytes"
	"fmt"
	"net"
	"net/mail"
	"net/url"
	"os"
	"path/filepath"
	"slices"
	"strings"
	"time"

	"holdfast/alerts/notify"
)

// NotifyConfig is one notifier under the top-level notify: list. Exactly
// one of webhook, alertmanager, mail or exec is set.
type NotifyConfig struct {
	Name         string              `yaml:"name"` // unique; labels metrics; default <kind>-<index>
	Webhook      *WebhookConfig      `yaml:"webhook"`
	Alertmanager *AlertmanagerConfig `yaml:"alertmanager"`
	Mail         *MailConfig         `yaml:"mail"`
	Exec         *ExecConfig         `yaml:"exec"`
	MinSeverity  string              `yaml:"min_severity"` // only alarms this severe or worse; default low
	GroupWait    *Duration           `yaml:"group_wait"`   // alarms starting within this go in one message; default 10s
	RemindEvery  Duration            `yaml:"remind_every"` // repeat unacknowledged alarms this often; 0: never
	Timeout      Duration            `yaml:"timeout"`      // per send; default 10s (exec: 30s)
	Retry        RetryConfig         `yaml:"retry"`

	kind string // webhook, alertmanager, mail or exec, set by the checker
}

// RetryConfig bounds the backoff between failed sends: min, doubled per
// failure, capped at max.
type RetryConfig struct {
	Min Duration `yaml:"min"` // default 5s
	Max Duration `yaml:"max"` // default 10 min
}

// WebhookConfig posts signed JSON to a URL.
type WebhookConfig struct {
	URL        string `yaml:"url"`
	SecretFile string `yaml:"secret_file"` // the shared HMAC key, read at start; required

	secret []byte
}

// AlertmanagerConfig pushes alerts to an Alertmanager.
type AlertmanagerConfig struct {
	URL         string   `yaml:"url"`          // base URL, e.g. http://127.0.0.1:9093
	ResendEvery Duration `yaml:"resend_every"` // re-post active alarms this often; default 1 min
	DaemonURL   string   `yaml:"daemon_url"`   // how Alertmanager's users reach this daemon, for generatorURL; default http://<http.listen>
}

// MailConfig sends mail through an SMTP relay with STARTTLS.
type MailConfig struct {
	Server        string   `yaml:"server"` // host:port, e.g. mail.example.internal:587
	From          string   `yaml:"from"`
	To            []string `yaml:"to"`
	Username      string   `yaml:"username"`
	PasswordFile  string   `yaml:"password_file"`  // read at start; needed with username
	PlainLoopback bool     `yaml:"plain_loopback"` // no TLS; only for a relay on 127.0.0.1 or ::1

	password string
}

// ExecConfig runs a local command per alarm transition.
type ExecConfig struct {
	Command string   `yaml:"command"` // absolute path
	Args    []string `yaml:"args"`
}

// Notifier defaults and bounds.
const (
	defaultGroupWait   = 10 * time.Second
	defaultSendTimeout = 10 * time.Second
	defaultAMResend    = time.Minute
	minRetry           = 10 * time.Millisecond
	maxGroupWait       = 10 * time.Minute
	minRemind          = time.Minute
)

var notifierKinds = []string{"webhook", "alertmanager", "mail", "exec"}

// notifiers checks the notify: list and fills defaults.
func (v *checker) notifiers(cfg *Config) {
	seen := map[string]int{}
	for i, n := range cfg.Notify {
		path := fmt.Sprintf("notify[%d]", i)
		if n == nil {
			v.problem(path, "empty notifier; want one of %s", strings.Join(notifierKinds, ", "))
			continue
		}
		v.notifier(path, n, i)
		if j, dup := seen[n.Name]; dup {
			v.problem(path+".name", "notifier %q is already defined at notify[%d]; give each a unique name", n.Name, j)
		}
		seen[n.Name] = i
	}
}

func (v *checker) notifier(path string, n *NotifyConfig, i int) {
	var kinds []string
	for k, set := range map[string]bool{"webhook": n.Webhook != nil, "alertmanager": n.Alertmanager != nil,
		"mail": n.Mail != nil, "exec": n.Exec != nil} {
		if set {
			kinds = append(kinds, k)
		}
	}
	slices.Sort(kinds)
	if len(kinds) != 1 {
		v.problem(path, "want exactly one of webhook, alertmanager, mail or exec, got %d (%s)", len(kinds), strings.Join(kinds, ", "))
		return
	}
	n.kind = kinds[0]
	if n.Name == "" {
		n.Name = fmt.Sprintf("%s-%d", n.kind, i)
	}
	v.expect(validName(n.Name), path+".name", "use letters, digits, '-', '_' or '.', got %q", n.Name)
	v.common(path, n)
	switch {
	case n.Webhook != nil:
		v.httpURL(path+".webhook.url", n.Webhook.URL)
		n.Webhook.secret = v.secret(path+".webhook.secret_file", n.Webhook.SecretFile, true)
	case n.Alertmanager != nil:
		v.httpURL(path+".alertmanager.url", n.Alertmanager.URL)
		if n.Alertmanager.DaemonURL != "" {
			v.httpURL(path+".alertmanager.daemon_url", n.Alertmanager.DaemonURL)
		}
		if n.Alertmanager.ResendEvery == 0 {
			n.Alertmanager.ResendEvery = Duration(defaultAMResend)
		}
		v.expect(n.Alertmanager.ResendEvery.D() >= time.Second, path+".alertmanager.resend_every", "must be at least 1s, got %s", n.Alertmanager.ResendEvery.D())
		v.expect(n.RemindEvery == 0, path+".remind_every", "Alertmanager repeats notifications itself (its route's repeat_interval); remove remind_every here")
	case n.Mail != nil:
		v.mail(path+".mail", n.Mail)
	case n.Exec != nil:
		v.expect(filepath.IsAbs(n.Exec.Command), path+".exec.command", "want an absolute path such as /usr/local/bin/page-oncall, got %q", n.Exec.Command)
	}
}

func (v *checker) common(path string, n *NotifyConfig) {
	if n.MinSeverity == "" {
		n.MinSeverity = severities[0]
	}
	v.expect(slices.Contains(severities, n.MinSeverity), path+".min_severity", "want one of %s, got %q", strings.Join(severities, ", "), n.MinSeverity)
	if n.GroupWait == nil {
		gw := Duration(defaultGroupWait)
		n.GroupWait = &gw
	}
	v.expect(*n.GroupWait >= 0 && n.GroupWait.D() <= maxGroupWait, path+".group_wait", "want 0 to %s, got %s", maxGroupWait, n.GroupWait.D())
	v.expect(n.RemindEvery == 0 || n.RemindEvery.D() >= minRemind, path+".remind_every", "want at least %s, or leave it out for no reminders; got %s", minRemind, n.RemindEvery.D())
	if n.Timeout == 0 {
		n.Timeout = Duration(defaultSendTimeout)
		if n.Exec != nil {
			n.Timeout = Duration(notify.DefaultExecTimeout)
		}
	}
	v.expect(n.Timeout > 0, path+".timeout", "must be positive, got %s", n.Timeout.D())
	v.expect(n.Retry.Min == 0 || n.Retry.Min.D() >= minRetry, path+".retry.min", "want at least %s, got %s", minRetry, n.Retry.Min.D())
	v.expect(n.Retry.Max == 0 || n.Retry.Max >= n.Retry.Min, path+".retry.max", "must not be less than retry.min (%s), got %s", n.Retry.Min.D(), n.Retry.Max.D())
}

func (v *checker) httpURL(path, raw string) {
	u, err := url.Parse(raw)
	if raw == "" || err != nil || (u.Scheme != "http" && u.Scheme != "https") || u.Host == "" {
		v.problem(path, "want an http:// or https:// URL such as https://alerts.example.internal/hook, got %q", raw)
	}
}

func (v *checker) mail(path string, m *MailConfig) {
	host, _, err := net.SplitHostPort(m.Server)
	v.expect(err == nil && host != "", path+".server", "want host:port such as mail.example.internal:587, got %q", m.Server)
	_, err = mail.ParseAddress(m.From)
	v.expect(err == nil, path+".from", "want a mail address such as holdfast@lab.example.internal, got %q", m.From)
	v.expect(len(m.To) > 0, path+".to", "missing; list who gets the mail")
	for i, to := range m.To {
		_, err := mail.ParseAddress(to)
		v.expect(err == nil, fmt.Sprintf("%s.to[%d]", path, i), "want a mail address, got %q", to)
	}
	v.expect(!m.PlainLoopback || host == "" || notify.IsLoopback(host), path+".plain_loopback",
		"sending without TLS is allowed only to a relay on 127.0.0.1, ::1 or localhost; %q is not one (remove plain_loopback and use STARTTLS)", host)
	v.expect((m.Username == "") == (m.PasswordFile == ""), path, "give username and password_file together, or neither")
	if m.PasswordFile != "" {
		m.password = string(v.secret(path+".password_file", m.PasswordFile, true))
	}
}

// secret reads a secret file: its content, surrounding white space removed.
// The problem never quotes the content.
func (v *checker) secret(path, file string, required bool) []byte {
	if file == "" {
		v.expect(!required, path, "missing; name a file holding the secret (mode 0600), e.g. /etc/holdfast/hook.key")
		return nil
	}
	b, err := os.ReadFile(file)
	if err != nil && v.secretsOptional() {
		v.cfg.Notes = append(v.cfg.Notes, fmt.Sprintf("%d: note: %s: cannot read the secret here (%v); the daemon will need it", v.line(path), path, err))
		return nil
	}
	if err != nil {
		v.problem(path, "cannot read the secret: %v", err)
		return nil
	}
	b = bytes.TrimSpace(b)
	v.expect(len(b) > 0, path, "%s is empty; put the secret in it", file)
	return b
}

func validName(s string) bool {
	return s != "" && strings.Trim(s, "abcdefghijklmnopqrstuvwxyzABCDEFGHIJKLMNOPQRSTUVWXYZ0123456789-_.") == ""
}
