package config

import (
	"holdfast/daemon/config/configtest"
	"os"
	"os/exec"
	"path/filepath"
	"strings"
	"syscall"
	"testing"
)

const secretHelperEnv = "HOLDFAST_SECRET_CHECK_HELPER"

// TestSecretCheckHelper is not a test: TestCheckFailsOnUnreadableSecret
// runs the test binary as another user with it, to check a config as the
// service's user would (the unit's ExecStartPre does).
func TestSecretCheckHelper(t *testing.T) {
	path := os.Getenv(secretHelperEnv)
	if path == "" {
		t.Skip("helper for TestCheckFailsOnUnreadableSecret")
	}
	_, err := CheckConfig(path)
	if err != nil {
		os.Stdout.WriteString(err.Error())
		os.Exit(1)
	}
	os.Exit(0)
}

func hookConfig(t *testing.T, dir, notify string) string {
	t.Helper()
	p := filepath.Join(dir, "holdfast.yaml")
	text := strings.ReplaceAll(configtest.NotifyBase+notify, "DIR", dir)
	if err := os.WriteFile(p, []byte(text), 0o644); err != nil {
		t.Fatal(err)
	}
	return p
}

// A secret file that exists but cannot be read by the user holdfast
// check runs as is a problem, not a note: the daemon, as that user, could
// not read it either (DynamicUser=yes and a root-owned 0600 file). As
// root, the test checks as the unprivileged user nobody (65534), the way
// the unit's ExecStartPre checks as the service's user; otherwise as
// itself, with the file's mode 0000.
func TestCheckFailsOnUnreadableSecret(t *testing.T) {
	dir := t.TempDir()
	key := writeSecret(t, dir, "hook.key", "only root may read this")
	cfgPath := hookConfig(t, dir, `
notify:
  - webhook: {url: "https://alerts.example.internal/hook", secret_file: DIR/hook.key}
`)
	var out []byte
	var err error
	if os.Geteuid() != 0 {
		if err := os.Chmod(key, 0); err != nil {
			t.Fatal(err)
		}
		_, cerr := CheckConfig(cfgPath)
		if cerr != nil {
			out, err = []byte(cerr.Error()), cerr
		}
	} else {
		out, err = checkAsNobody(t, dir, cfgPath)
	}
	t.Logf("check as the service's user: %s", out)
	if err == nil {
		t.Fatalf("check passed on a secret its user cannot read:\n%s", out)
	}
	for _, want := range []string{"notify[0].webhook.secret_file: cannot read " + key, "permission denied",
		"LoadCredential=hook.key:" + key, "secret_credential: hook.key"} {
		if !strings.Contains(string(out), want) {
			t.Errorf("problem lacks %q:\n%s", want, out)
		}
	}
}

// checkAsNobody runs holdfast check's config check as uid/gid 65534 on a
// copy of the test binary everyone can run.
func checkAsNobody(t *testing.T, dir, cfgPath string) ([]byte, error) {
	t.Helper()
	bin := filepath.Join(dir, "check.test")
	b, err := os.ReadFile(os.Args[0])
	if err != nil {
		t.Fatal(err)
	}
	if err := os.WriteFile(bin, b, 0o755); err != nil {
		t.Fatal(err)
	}
	for d := dir; d != "/" && d != "."; d = filepath.Dir(d) { // let nobody reach the config
		if fi, err := os.Stat(d); err == nil && fi.Mode().Perm()&0o005 != 0o005 {
			if err := os.Chmod(d, fi.Mode().Perm()|0o005); err != nil {
				t.Skipf("cannot open %s to other users: %v", d, err)
			}
		}
	}
	cmd := exec.Command(bin, "-test.run=^TestSecretCheckHelper$")
	cmd.Env = append(os.Environ(), secretHelperEnv+"="+cfgPath)
	cmd.SysProcAttr = &syscall.SysProcAttr{Credential: &syscall.Credential{Uid: 65534, Gid: 65534}}
	out, err := cmd.Output()
	if ee, ok := err.(*exec.ExitError); !ok && err != nil {
		t.Skipf("cannot run as nobody: %v", err)
	} else if ok && ee.ExitCode() != 1 {
		t.Fatalf("helper failed: %v\n%s%s", err, out, ee.Stderr)
	}
	return out, err
}

// Checked as root, a secret only root can read is noted: the shipped
// unit's dynamic user could not read it.
func TestCheckNotesRootOnlySecret(t *testing.T) {
	if os.Geteuid() != 0 {
		t.Skip("needs root to own a root-only file")
	}
	dir := t.TempDir()
	writeSecret(t, dir, "hook.key", "root only")
	cfg, err := CheckConfig(hookConfig(t, dir, `
notify:
  - webhook: {url: "https://alerts.example.internal/hook", secret_file: DIR/hook.key}
`))
	if err != nil {
		t.Fatal(err)
	}
	if notes := strings.Join(cfg.Notes, "\n"); !strings.Contains(notes, "only root can read") {
		t.Errorf("notes %q, want one saying only root can read the secret", notes)
	}
}

// A secret given as a systemd credential is read from
// $CREDENTIALS_DIRECTORY/NAME; without that directory the daemon refuses
// (and holdfast check elsewhere notes it); a credential the unit did not
// pass is a problem naming the LoadCredential= line to add.
func TestSecretCredential(t *testing.T) {
	dir := t.TempDir()
	creds := filepath.Join(dir, "credentials")
	os.Mkdir(creds, 0o700)
	writeSecret(t, creds, "hook-key", "credential secret")
	writeSecret(t, creds, "api-token", "a token of at least sixteen characters")
	notify := `
http: {listen: "127.0.0.1:0", token_credential: api-token}
notify:
  - webhook: {url: "https://alerts.example.internal/hook", secret_credential: hook-key}
`
	text := strings.ReplaceAll(strings.Replace(configtest.NotifyBase, `http: {listen: "127.0.0.1:0"}`+"\n", "", 1)+notify, "DIR", dir)

	t.Setenv("CREDENTIALS_DIRECTORY", creds)
	cfg, err := ParseConfig("holdfast.yaml", []byte(text))
	if err != nil {
		t.Fatal(err)
	}
	if got := string(cfg.Notify[0].Webhook.Secret); got != "credential secret" {
		t.Errorf("secret %q", got)
	}
	if got, want := cfg.HTTP.TokenPath(), filepath.Join(creds, "api-token"); got != want {
		t.Errorf("token read from %s, want %s", got, want)
	}
	os.Remove(filepath.Join(creds, "hook-key"))
	_, err = ParseConfig("holdfast.yaml", []byte(text))
	if err == nil || !strings.Contains(err.Error(), `credential "hook-key" was not passed to the service: add LoadCredential=hook-key:/etc/holdfast/hook-key`) {
		t.Errorf("missing credential: %v", err)
	}

	t.Setenv("CREDENTIALS_DIRECTORY", "")
	_, err = ParseConfig("holdfast.yaml", []byte(text))
	if err == nil || !strings.Contains(err.Error(), "notify[0].webhook.secret_credential: $CREDENTIALS_DIRECTORY is not set") {
		t.Errorf("no credentials directory: %v", err)
	}
	p := filepath.Join(dir, "holdfast.yaml")
	os.WriteFile(p, []byte(text), 0o600)
	cfg, err = CheckConfig(p)
	if err != nil {
		t.Fatalf("check elsewhere: %v", err)
	}
	if notes := strings.Join(cfg.Notes, "\n"); !strings.Contains(notes, "read from $CREDENTIALS_DIRECTORY/hook-key") {
		t.Errorf("notes %q", notes)
	}

	both := strings.Replace(text, "secret_credential: hook-key", "secret_credential: hook-key, secret_file: /etc/holdfast/hook.key", 1)
	if _, err := ParseConfig("holdfast.yaml", []byte(both)); err == nil || !strings.Contains(err.Error(), "give secret_file or secret_credential, not both") {
		t.Errorf("both: %v", err)
	}
}
