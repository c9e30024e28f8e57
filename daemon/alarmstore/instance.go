package alarmstore

import (
	"crypto/rand"
	"encoding/hex"
	"fmt"
	"os"
	"syscall"

	bolt "go.etcd.io/bbolt"
)

// The instance id names one data file's life, so that dedupe keys (which
// every file numbers from 1) never repeat across files. It is made when
// the file is created and made again when the file turns out to be a
// restored copy: a file whose identity on disk (device and inode) is not
// the one recorded (copied to a new file, moved to another disk, rewritten
// by holdfast db compact), or one holdfast db backup marked as a copy (so
// a backup copied over the old file, which keeps its inode, is caught too).
// Renewing the id more often than needed costs nothing: keys are stored
// with their transitions, so one waiting to be delivered keeps its key.
var (
	bucketMeta  = []byte("alarm-meta")
	keyInstance = []byte("instance") // 16 hex digits
	keyFileID   = []byte("file")     // "<device>:<inode>" when the id was recorded
	keyCopy     = []byte("copy")     // present in a copy holdfast db backup made
)

// Instance is the data file's instance id, which prefixes dedupe keys.
func (s *Store) Instance() string { return s.instance }

// Renewed says why Open made a new instance id ("" when it kept the
// stored one): "new file", "copied or restored file", "marked backup".
func (s *Store) Renewed() string { return s.renewed }

// openInstance reads the instance id of db, making a new one when the
// file is new or a restored copy; it runs in Open's transaction.
func openInstance(tx *bolt.Tx) (id, renewed string, err error) {
	b, err := tx.CreateBucketIfNotExists(bucketMeta)
	if err != nil {
		return "", "", err
	}
	file := fileID(tx.DB().Path())
	id = string(b.Get(keyInstance))
	switch {
	case b.Get(keyCopy) != nil:
		renewed = "marked backup"
	case id == "":
		renewed = "new file"
	case file != "" && string(b.Get(keyFileID)) != file:
		renewed = "copied or restored file"
	default:
		return id, "", nil
	}
	raw := make([]byte, 8)
	rand.Read(raw) // never fails (crypto/rand)
	id = hex.EncodeToString(raw)
	if err := b.Put(keyInstance, []byte(id)); err != nil {
		return "", "", err
	}
	if err := b.Put(keyFileID, []byte(file)); err != nil {
		return "", "", err
	}
	return id, renewed, b.Delete(keyCopy)
}

// fileID is the file's device and inode, "" when they cannot be read.
func fileID(path string) string {
	fi, err := os.Stat(path)
	if err != nil {
		return ""
	}
	st, ok := fi.Sys().(*syscall.Stat_t)
	if !ok {
		return ""
	}
	return fmt.Sprintf("%d:%d", st.Dev, st.Ino)
}

// MarkCopy marks db, a copy of a data file just made, as a copy: the
// first Open of it for writing gives it a new instance id, however it is
// put back in place.
func MarkCopy(db *bolt.DB) error {
	return db.Update(func(tx *bolt.Tx) error {
		b, err := tx.CreateBucketIfNotExists(bucketMeta)
		if err != nil {
			return err
		}
		return b.Put(keyCopy, []byte{1})
	})
}
