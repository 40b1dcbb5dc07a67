package cli

import (
	"bytes"
	"errors"
	"flag"
	"fmt"
	"io"
	"testing"

	"github.com/gridloupe/gridloupe/config"
	"github.com/gridloupe/gridloupe/stream/input"
)

// TestExitCode: DESIGN "Errors and exit codes": 0 for success and help,
// 2 for usage, config and input-header errors (wrapped or not), 1 for
// everything else.
func TestExitCode(t *testing.T) {
	for _, c := range []struct {
		name string
		err  error
		want int
	}{
		{"success", nil, 0},
		{"help", ErrHelp, 0},
		{"usage", Usagef("replay: want exactly one INPUT file, got %d", 0), 2},
		{"wrapped usage", fmt.Errorf("replay: %w", &UsageError{Err: io.EOF}), 2},
		{"config", fmt.Errorf("site.yaml:3:5: %w", config.ErrInvalid), 2},
		{"input header", fmt.Errorf("rec.csv: %w", input.ErrHeader), 2},
		{"other", errors.New("input: no such file"), 1},
		{"wrapped other", fmt.Errorf("write: %w", io.ErrShortWrite), 1},
	} {
		if got := ExitCode(c.err); got != c.want {
			t.Errorf("%s: ExitCode(%v) = %d, want %d", c.name, c.err, got, c.want)
		}
	}
}

// TestParseFlags: -h prints the usage on stdout and returns ErrHelp; a bad
// flag is a usage error naming the command (DESIGN "Errors and exit
// codes"); good flags parse.
func TestParseFlags(t *testing.T) {
	newFS := func() (*flag.FlagSet, *string) {
		fs := flag.NewFlagSet("replay", flag.ContinueOnError)
		v := fs.String("interval", "200ms", "interval")
		fs.Usage = func() { fmt.Fprint(fs.Output(), "Usage: replay [flags]\n") }
		return fs, v
	}
	var out bytes.Buffer
	fs, _ := newFS()
	if err := ParseFlags(fs, []string{"-h"}, &out); !errors.Is(err, ErrHelp) || out.String() != "Usage: replay [flags]\n" {
		t.Errorf("-h: %v, stdout %q; want ErrHelp and the usage", err, out.String())
	}
	out.Reset()
	fs, _ = newFS()
	err := ParseFlags(fs, []string{"--store", "x"}, &out)
	var ue *UsageError
	if !errors.As(err, &ue) || err.Error() != "replay: flag provided but not defined: -store" || out.Len() != 0 {
		t.Errorf("bad flag: %v (%T), stdout %q; want a usage error naming replay, nothing on stdout", err, err, out.String())
	}
	fs, v := newFS()
	if err := ParseFlags(fs, []string{"--interval", "3s", "in.csv"}, &out); err != nil || *v != "3s" || fs.Arg(0) != "in.csv" {
		t.Errorf("good flags: %v, interval %q, args %q", err, *v, fs.Args())
	}
}
