package daemon

import (
	"errors"
	"fmt"

	"holdfast/daemon/alarmstore"
	"holdfast/daemon/store"
)

// MarkBackup marks the store file at path, a backup just made, as a copy,
// so that the first daemon to run on it (once it is restored, in whatever
// way) gives it a new instance id and no dedupe key of the original's is
// handed out again. It opens the file for writing; no daemon may hold it.
func MarkBackup(path string) error {
	db, err := store.Open(path, store.Options{})
	if err != nil {
		return fmt.Errorf("mark %s as a backup: %w", path, err)
	}
	err = alarmstore.MarkCopy(db.Bolt())
	if err != nil {
		err = fmt.Errorf("mark %s as a backup: %w", path, err)
	}
	return errors.Join(err, db.Close())
}
