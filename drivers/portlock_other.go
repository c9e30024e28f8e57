//go:build !unix

package drivers

import "os"

// lockPort does nothing where flock is not available; the serial library's
// own exclusive open is the only guard there.
func lockPort(string) (*os.File, error) { return nil, nil }
