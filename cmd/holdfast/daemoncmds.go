package main

import (
	"context"
	"errors"
	"fmt"
	"io"
	"runtime/debug"
)

func cmdDemo(ctx context.Context, args []string, stdout, stderr io.Writer) error {
	return errors.New("demo: not built yet")
}

func cmdRun(ctx context.Context, args []string, stdout, stderr io.Writer) error {
	return errors.New("run: not built yet")
}

func cmdCheck(ctx context.Context, args []string, stdout, stderr io.Writer) error {
	return errors.New("check: not built yet")
}

func cmdVersion(ctx context.Context, args []string, stdout, stderr io.Writer) error {
	v := "(devel)"
	if bi, ok := debug.ReadBuildInfo(); ok && bi.Main.Version != "" {
		v = bi.Main.Version
	}
	fmt.Fprintf(stdout, "holdfast %s\n", v)
	return nil
}
