package store

import (
	"errors"
	"fmt"
	"time"
)

// ErrClosed is returned by operations on a DB after Close.
var ErrClosed = errors.New("store is closed")

// A ChunkError reports a stored chunk that cannot be read: torn, corrupted,
// or written by a newer format. The chunk stays in place untouched.
type ChunkError struct {
	Series string
	Start  time.Time // the chunk's key: the time of its first point
	Err    error
}

// Error names the series and the chunk's start time.
func (e *ChunkError) Error() string {
	return fmt.Sprintf("series %q: chunk starting %s: %v", e.Series, e.Start.Format(time.RFC3339Nano), e.Err)
}

// Unwrap returns the decoding error.
func (e *ChunkError) Unwrap() error { return e.Err }

// errCorruptField reports a field whose stored value is impossible.
func errCorruptField(what string) error { return fmt.Errorf("corrupt %s", what) }
