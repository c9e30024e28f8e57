package config

import (
	"bytes"
	"errors"
	"fmt"
	"io/fs"
	"net"
	"net/mail"
	"net/url"
	"os"
	"os/user"
	"path/filepath"
	"slices"
	"strconv"
	"strings"
	"syscall"
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
	URL              string `yaml:"url"`
	SecretFile       string `yaml:"secret_file"`       // the shared HMAC key, read at start; this or secret_credential is required
	SecretCredential string `yaml:"secret_credential"` // or: the name of a systemd credential holding it (LoadCredential=)

	Secret []byte `yaml:"-"` // the key read by the checker
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
	PasswordFile  string   `yaml:"password_file"`       // read at start; needed with username (or password_credential)
	PasswordCred  string   `yaml:"password_credential"` // or: the name of a systemd credential holding it
	PlainLoopback bool     `yaml:"plain_loopback"`      // no TLS; only for a relay on 127.0.0.1 or ::1

	Password string `yaml:"-"` // read by the checker
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
	v.httpToken(&cfg.HTTP)
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
		w := n.Webhook
		w.Secret = v.secret(secretRef{path: path + ".webhook", fileKey: "secret_file", credKey: "secret_credential",
			file: w.SecretFile, credential: w.SecretCredential, required: true})
	case n.Alertmanager != nil:
		v.httpURL(path+".alertmanager.url", n.Alertmanager.URL)
		if n.Alertmanager.DaemonURL != "" {
			v.httpURL(path+".alertmanager.daemon_url", n.Alertmanager.DaemonURL)
		}
		if n.Alertmanager.ResendEvery == 0 {
			n.Alertmanager.ResendEvery = Duration(defaultAMResend)
		}
		v.expect(n.Alertmanager.ResendEvery.D() >= time.Second, path+".alertmanager.resend_every", "must be at least 1s, got %s", shortDuration(n.Alertmanager.ResendEvery.D()))
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
	v.expect(*n.GroupWait >= 0 && n.GroupWait.D() <= maxGroupWait, path+".group_wait", "want 0 to %s, got %s", shortDuration(maxGroupWait), shortDuration(n.GroupWait.D()))
	v.expect(n.RemindEvery == 0 || n.RemindEvery.D() >= minRemind, path+".remind_every", "want at least %s, or leave it out for no reminders; got %s", shortDuration(minRemind), shortDuration(n.RemindEvery.D()))
	if n.Timeout == 0 {
		n.Timeout = Duration(defaultSendTimeout)
		if n.Exec != nil {
			n.Timeout = Duration(notify.DefaultExecTimeout)
		}
	}
	v.expect(n.Timeout > 0, path+".timeout", "must be positive, got %s", shortDuration(n.Timeout.D()))
	v.expect(n.Retry.Min == 0 || n.Retry.Min.D() >= minRetry, path+".retry.min", "want at least %s, got %s", shortDuration(minRetry), shortDuration(n.Retry.Min.D()))
	v.expect(n.Retry.Max == 0 || n.Retry.Max >= n.Retry.Min, path+".retry.max", "must not be less than retry.min (%s), got %s", shortDuration(n.Retry.Min.D()), shortDuration(n.Retry.Max.D()))
}

func (v *checker) httpURL(path, raw string) {
	u, err := url.Parse(raw)
	if raw == "" || err != nil || (u.Scheme != "http" && u.Scheme != "https") || u.Host == "" {
		v.problem(path, "want an http:// or https:// URL such as https://alerts.example.internal/hook, got %s", shownURL(raw))
	}
}

// shownURL is raw as a config problem may print it: a notifier URL often
// carries a secret (a ?token=, user:password@), which `holdfast check`
// would otherwise print to a terminal or a CI log. Query values and
// userinfo are masked; a URL that does not parse is described by its
// parse error, never shown.
func shownURL(raw string) string {
	if raw == "" {
		return "nothing"
	}
	u, err := url.Parse(raw)
	if err != nil {
		var ue *url.Error
		if errors.As(err, &ue) {
			err = ue.Err // the reason, without the URL
		}
		return "a URL that does not parse (" + err.Error() + ")"
	}
	if u.User == nil && u.RawQuery == "" {
		return strconv.Quote(raw)
	}
	return strconv.Quote(notify.RedactURL(raw)) + " (secrets masked)"
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
	hasPassword := m.PasswordFile != "" || m.PasswordCred != ""
	v.expect((m.Username == "") == !hasPassword, path, "give username and password_file (or password_credential) together, or neither")
	if hasPassword {
		m.Password = string(v.secret(secretRef{path: path, fileKey: "password_file", credKey: "password_credential",
			file: m.PasswordFile, credential: m.PasswordCred, required: true}))
	}
}

// A secret is given either as a file (secret_file, password_file,
// token_file) or as a systemd credential (secret_credential, ...): the
// name of a credential the unit passes with LoadCredential=NAME:PATH,
// which systemd (running as root) reads and hands to the service, however
// unprivileged, as $CREDENTIALS_DIRECTORY/NAME (systemd.exec(5),
// "Credentials"). With DynamicUser=yes this is how the service reads a
// file only root may read.
type secretRef struct {
	path              string // the config path of the mapping, e.g. notify[0].webhook
	fileKey, credKey  string // e.g. secret_file, secret_credential
	file, credential  string
	example, required bool
}

// secret reads a secret: its content, surrounding white space removed.
// Problems never quote the content. A config being checked (holdfast
// check) may lack a file that only the daemon's machine holds (a note);
// but a file that exists and cannot be read is a problem, because the
// daemon, running as the same user, could not read it either: that is how
// the check in the unit's ExecStartPre catches a root-only secret before
// the service starts and fails.
func (v *checker) secret(r secretRef) []byte {
	fileP, credP := r.path+"."+r.fileKey, r.path+"."+r.credKey
	switch {
	case r.file != "" && r.credential != "":
		v.problem(r.path, "give %s or %s, not both", r.fileKey, r.credKey)
		return nil
	case r.credential != "":
		return v.credential(credP, r.credential)
	case r.file == "":
		v.expect(!r.required, fileP, "missing; name a file holding the secret (mode 0600), e.g. /etc/holdfast/hook.key, "+
			"or a systemd credential in %s", r.credKey)
		return nil
	}
	b, err := os.ReadFile(r.file)
	switch {
	case errors.Is(err, fs.ErrPermission):
		cred := credentialName(r.file)
		v.problem(fileP, "cannot read %s as %s: permission denied; a service running as this user cannot either. "+
			"Under systemd pass it as a credential: LoadCredential=%s:%s in the unit and %s: %s here "+
			"(see deploy/holdfast.service), or make it readable by the service's user", r.file, whoAmI(), cred, r.file, r.credKey, cred)
		return nil
	case err != nil && v.secretsOptional():
		v.note(fileP, "cannot read the secret here (%v); the daemon will need it", err)
		return nil
	case err != nil:
		v.problem(fileP, "cannot read the secret: %v", err)
		return nil
	}
	if v.secretsOptional() && os.Geteuid() == 0 && rootOnly(r.file) {
		cred := credentialName(r.file)
		v.note(fileP, "only root can read %s; the shipped unit runs holdfast as its own user (DynamicUser=yes), which "+
			"cannot: pass it as a credential (LoadCredential=%s:%s in the unit, %s: %s here)", r.file, cred, r.file, r.credKey, cred)
	}
	v.secretMode(fileP, r.file)
	b = bytes.TrimSpace(b)
	v.expect(len(b) > 0, fileP, "%s is empty; put the secret in it", r.file)
	return b
}

// credential reads $CREDENTIALS_DIRECTORY/name.
func (v *checker) credential(path, name string) []byte {
	if !validCredential(name) {
		v.problem(path, "want a credential name such as hook-key (letters, digits, '-', '_', '.'; no '/'), got %q", name)
		return nil
	}
	dir := os.Getenv("CREDENTIALS_DIRECTORY")
	if dir == "" {
		if v.secretsOptional() {
			v.note(path, "read from $CREDENTIALS_DIRECTORY/%s when the unit passes it (LoadCredential=%s:/etc/holdfast/%s); not set here", name, name, name)
			return nil
		}
		v.problem(path, "$CREDENTIALS_DIRECTORY is not set: run holdfast under systemd with LoadCredential=%s:/etc/holdfast/%s in the unit, or give the secret as a file", name, name)
		return nil
	}
	b, err := os.ReadFile(filepath.Join(dir, name))
	switch {
	case errors.Is(err, fs.ErrNotExist):
		v.problem(path, "credential %q was not passed to the service: add LoadCredential=%s:/etc/holdfast/%s to the unit (%s has no %s)", name, name, name, dir, name)
		return nil
	case err != nil:
		v.problem(path, "cannot read credential %q: %v", name, err)
		return nil
	}
	b = bytes.TrimSpace(b)
	v.expect(len(b) > 0, path, "credential %q is empty; put the secret in the file its LoadCredential= line names", name)
	return b
}

// httpToken checks the bearer token's source (http.token_file or
// http.token_credential) and records where the daemon will read it. A
// token file that is missing is left to the daemon's start, which refuses
// with the fix; one that exists but cannot be read is a problem here, as
// for any secret.
func (v *checker) httpToken(h *HTTPConfig) {
	switch {
	case h.TokenFile != "" && h.TokenCredential != "":
		v.problem("http", "give token_file or token_credential, not both")
	case h.TokenCredential != "":
		v.credential("http.token_credential", h.TokenCredential)
		h.tokenCredentialPath = filepath.Join(os.Getenv("CREDENTIALS_DIRECTORY"), h.TokenCredential)
	case h.TokenFile != "":
		if _, err := os.ReadFile(h.TokenFile); errors.Is(err, fs.ErrPermission) {
			v.secret(secretRef{path: "http", fileKey: "token_file", credKey: "token_credential", file: h.TokenFile})
		}
	}
}

// validCredential reports whether s can name a systemd credential: "a short
// ASCII string suitable as filename" (systemd.exec(5), LoadCredential=).
func validCredential(s string) bool { return validName(s) && len(s) <= 255 && s != "." && s != ".." }

// credentialName suggests a credential name for a secret file: its base
// name.
func credentialName(file string) string {
	if n := filepath.Base(file); validCredential(n) {
		return n
	}
	return "secret"
}

// rootOnly reports whether only root can read the file: owned by root,
// not readable by others, and readable by its group only if that group
// is root.
func rootOnly(file string) bool {
	fi, err := os.Stat(file)
	if err != nil {
		return false
	}
	st, ok := fi.Sys().(*syscall.Stat_t)
	if !ok {
		return false
	}
	m := fi.Mode().Perm()
	return st.Uid == 0 && m&0o004 == 0 && (m&0o040 == 0 || st.Gid == 0)
}

// whoAmI names the user the process runs as, for messages.
func whoAmI() string {
	uid := os.Geteuid()
	if u, err := user.LookupId(strconv.Itoa(uid)); err == nil {
		return fmt.Sprintf("user %s (uid %d)", u.Username, uid)
	}
	return fmt.Sprintf("uid %d", uid)
}

func validName(s string) bool {
	return s != "" && strings.Trim(s, "abcdefghijklmnopqrstuvwxyzABCDEFGHIJKLMNOPQRSTUVWXYZ0123456789-_.") == ""
}
