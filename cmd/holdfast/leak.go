package main

import (
	"context"
	"errors"
	"io"
)

// cmdLeak is not built yet; the issue that adds it replaces this file.
func cmdLeak(ctx context.Context, args []string, stdout, stderr io.Writer) error {
	return errors.New("leak: not built yet")
}
