package main

import (
	"path/filepath"
	"strings"
	"testing"

	bolt "go.etcd.io/bbolt"

	"holdfast/daemon/alarmstore"
)

// A copy holdfast db backup makes is marked as one: however it is put back
// (even copied over the old file, keeping its inode), the first daemon on
// it gives it a new instance id, so no dedupe key of the original's is
// handed out again. The original is not marked.
func TestBackupIsMarkedForANewInstance(t *testing.T) {
	dir := t.TempDir()
	if out, _, err := runHF(t, "import", "--data", dir, nightCSV(t)); err != nil {
		t.Fatalf("import: %v\n%s", err, out)
	}
	renewed := func(path string) string {
		db, err := bolt.Open(path, 0o600, nil)
		if err != nil {
			t.Fatal(err)
		}
		defer db.Close()
		st, err := alarmstore.Open(db)
		if err != nil {
			t.Fatal(err)
		}
		return st.Renewed()
	}
	original := filepath.Join(dir, "holdfast.db")
	copyPath := filepath.Join(t.TempDir(), "backup.db")
	renewed(original) // as a daemon would have: the file gets its instance id
	if out, _, err := runHF(t, "db", "backup", "--data", dir, copyPath); err != nil || !strings.Contains(out, "backed up") {
		t.Fatalf("backup: %v\n%s", err, out)
	}
	if got := renewed(copyPath); got != "marked backup" {
		t.Errorf("first open of the backup: instance renewed for %q, want a marked backup", got)
	}
	if got := renewed(copyPath); got != "" {
		t.Errorf("second open of the restored copy: renewed again (%q); want the new id kept", got)
	}
	if got := renewed(original); got != "" {
		t.Errorf("the original after the backup: renewed (%q); want it untouched", got)
	}
}
