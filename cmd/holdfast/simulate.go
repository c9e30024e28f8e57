package main

import (
	"context"
	"errors"
	"io"
)

// cmdSimulate is not built yet; the issue that adds it replaces this file.
func cmdSimulate(ctx context.Context, args []string, stdout, stderr io.Writer) error {
	return errors.New("simulate: not built yet")
}
