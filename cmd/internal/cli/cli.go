package cli

import (
	"errors"
	"flag"
	"fmt"
	"io"
	"strings"

	"github.com/gridloupe/gridloupe/config"
	"github.com/gridloupe/gridloupe/stream/input"
)

// UsageError marks errors that exit with status 2: bad flags, bad config,
// unreadable input headers.
type UsageError struct{ Err error }

func (e *UsageError) Error() string { return e.Err.Error() }
func (e *UsageError) Unwrap() error { return e.Err }

// Usagef formats a usage error.
func Usagef(format string, a ...any) error { return &UsageError{fmt.Errorf(format, a...)} }

// ErrHelp is returned after printing help: exit 0.
var ErrHelp = errors.New("help requested")

// ExitCode maps an error to the process exit status of DESIGN's table:
// 2 for usage, config and input-header errors, 1 for everything else.
func ExitCode(err error) int {
	var ue *UsageError
	switch {
	case err == nil, errors.Is(err, ErrHelp):
		return 0
	case errors.As(err, &ue), errors.Is(err, config.ErrInvalid), errors.Is(err, input.ErrHeader):
		return 2
	}
	return 1
}

// ParseFlags parses a subcommand's flags, turning flag errors into usage
// errors and -h into ErrHelp (help text goes to stdout).
func ParseFlags(fs *flag.FlagSet, args []string, stdout io.Writer) error {
	var msg strings.Builder
	fs.SetOutput(&msg)
	err := fs.Parse(args)
	if errors.Is(err, flag.ErrHelp) {
		fs.SetOutput(stdout)
		fs.Usage()
		return ErrHelp
	}
	if err != nil {
		return Usagef("%s: %v", fs.Name(), err)
	}
	return nil
}
