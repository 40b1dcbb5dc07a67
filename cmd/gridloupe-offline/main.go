package main

import (
	"context"
	"errors"
	"fmt"
	"io"
	"os"
	"os/signal"
	"syscall"

	"github.com/gridloupe/gridloupe/cmd/internal/cli"
	"github.com/gridloupe/gridloupe/cmd/internal/replaycmd"
)

func main() {
	ctx, stop := signal.NotifyContext(context.Background(), os.Interrupt, syscall.SIGTERM)
	err := run(ctx, os.Args[1:], os.Stdin, os.Stdout, os.Stderr)
	stop()
	if err != nil {
		fmt.Fprintln(os.Stderr, "gridloupe-offline:", err)
		os.Exit(cli.ExitCode(err))
	}
}

// run is the whole program behind main, callable from tests: replay's
// flags and INPUT, exactly as `gridloupe replay` takes them.
func run(ctx context.Context, args []string, stdin io.Reader, stdout, stderr io.Writer) error {
	err := replaycmd.Run(ctx, "gridloupe-offline", args, stdin, stdout, stderr)
	if errors.Is(err, cli.ErrHelp) {
		return nil
	}
	return err
}
