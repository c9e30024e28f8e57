package main

import (
	"context"
	"errors"
	"io"
)

// cmdPorts is not built yet; the issue that adds it replaces this file.
func cmdPorts(ctx context.Context, args []string, stdout, stderr io.Writer) error {
	return errors.New("ports: not built yet")
}
