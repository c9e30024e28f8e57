package main

import (
	"errors"
	"fmt"
	"io"
	"io/fs"
	"os"
	"time"

	bolt "go.etcd.io/bbolt"

	"holdfast/daemon"
	"holdfast/daemon/store"
)

// demoFresh makes sure the demo's --data directory holds no earlier night:
// the simulated clock starts at today's wall time on every run, so a
// second run's samples, alarms and hold tests would land inside the
// first's. A directory with a store is refused (before the demo writes
// its token there, so a demo running on it keeps its token), unless fresh
// is set: then the old store is deleted, once no other demo or daemon
// holds it.
func demoFresh(dir string, fresh bool, stdout io.Writer) error {
	path := daemon.StorePath(dir)
	if _, err := os.Stat(path); errors.Is(err, fs.ErrNotExist) {
		return nil
	} else if err != nil {
		return fmt.Errorf("data directory: %w", err)
	}
	if !fresh {
		return fmt.Errorf("data directory %s already holds a store (%s) from an earlier demo or a daemon; "+
			"a second run would write its night inside the first: choose a new directory, or give --fresh to delete that store and start over", dir, path)
	}
	db, err := store.Open(path, store.Options{Timeout: 200 * time.Millisecond})
	if errors.Is(err, bolt.ErrTimeout) {
		return fmt.Errorf("data directory %s: its store is in use (a demo or daemon is running on it); stop that one first", dir)
	}
	if err == nil {
		db.Close()
	}
	// A store that does not open (damaged, another format) is the demo's to
	// delete all the same: --fresh asked for a new one.
	if err := os.Remove(path); err != nil {
		return fmt.Errorf("--fresh: %w", err)
	}
	fmt.Fprintf(stdout, "starting fresh: deleted the earlier demo's store %s\n", path)
	return nil
}
