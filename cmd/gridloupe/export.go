package main

import (
	"bufio"
	"errors"
	"flag"
	"fmt"
	"io"
	"os"
	"strings"
	"time"

	"github.com/gridloupe/gridloupe/cmd/gridloupe/internal/gateway"
	"github.com/gridloupe/gridloupe/cmd/internal/replaycmd"
	"github.com/gridloupe/gridloupe/config"
	"github.com/gridloupe/gridloupe/store"
	"github.com/gridloupe/gridloupe/stream/encode"
)

const exportHelp = `Usage: gridloupe export --store FILE --interval 3s|10min|2h [flags]

Prints stored aggregates in the replay schema (JSON Lines or CSV), or for
people as per-phase blocks (table; with --config, titled with the site and
with its IEEE 519 reference beside THD-V and TDD) or one wide row per record
(wide). While 'gridloupe run' holds the store, the request goes through the
daemon's local socket (FILE.sock); otherwise the file is opened read-only.

Flags:
`

func cmdExport(args []string, stdout, stderr io.Writer) error {
	fs := flag.NewFlagSet("export", flag.ContinueOnError)
	dbPath := fs.String("store", "", "bbolt store `FILE`; required")
	iv := fs.String("interval", "10min", "level to print: 3s, 10min or 2h")
	from := fs.String("from", "", "first record start, RFC 3339 (default: the oldest)")
	to := fs.String("to", "", "end (exclusive), RFC 3339 (default: the newest)")
	format := fs.String("format", "jsonl", "output format: jsonl, csv, table (per-phase blocks) or wide")
	cfgPath := fs.String("config", "", "config `FILE` of the site, for the table's title and IEEE 519 reference (optional)")
	timeout := fs.Duration("timeout", 2*time.Second, "how long to wait for the store's file lock")
	fs.Usage = func() {
		fmt.Fprint(fs.Output(), exportHelp)
		fs.PrintDefaults()
	}
	if err := parseFlags(fs, args, stdout); err != nil {
		return err
	}
	if *dbPath == "" || fs.NArg() != 0 {
		return usagef("export: --store FILE is required and takes no arguments")
	}
	req := gateway.ExportRequest{Interval: *iv, Format: *format}
	var err error
	if req.From, req.To, err = parseSpan("export", *from, *to); err != nil {
		return err
	}
	switch req.Interval {
	case "3s", "10min", "2h":
	default:
		return usagef("export: --interval %q: allowed are 3s, 10min, 2h", req.Interval)
	}
	if _, ok := encode.ParseFormat(req.Format); !ok {
		return usagef("export: --format %q: allowed are %s", req.Format, strings.Join(encode.FormatNames(), ", "))
	}
	if *cfgPath != "" {
		cfg, err := config.Load(*cfgPath)
		if err != nil {
			return &usageError{Err: err}
		}
		req.Title, req.Reference = cfg.Site, replaycmd.IEEEReference(cfg)
	}
	if _, err := os.Stat(*dbPath); err != nil {
		return fmt.Errorf("export: %w", err)
	}
	out := bufio.NewWriterSize(stdout, 64<<10)
	// A running daemon answers on its socket; else open the file read-only.
	sock := gateway.SocketPath(*dbPath)
	if _, err := os.Stat(sock); err == nil {
		err := gateway.RequestExport(sock, req, out)
		switch {
		case err == nil:
			return flushOut(out)
		case errors.Is(err, gateway.ErrExport):
			return &usageError{Err: err}
		case !errors.Is(err, gateway.ErrNoDaemon):
			// part of the answer may be out already: never add the file's
			flushOut(out)
			return fmt.Errorf("export: %w", err)
		}
		// a stale socket of a killed daemon: read the file
	}
	db, err := store.OpenReadOnly(*dbPath, *timeout)
	if err != nil {
		return fmt.Errorf("export: %w", err)
	}
	defer db.Close()
	if err := gateway.WriteExport(out, db, req); err != nil {
		flushOut(out)
		return fmt.Errorf("export: %w", err)
	}
	return flushOut(out)
}

func flushOut(w *bufio.Writer) error {
	if err := w.Flush(); err != nil {
		return fmt.Errorf("export: writing the output: %w", err)
	}
	return nil
}

// parseSpan reads the --from and --to flags of a store command (RFC 3339;
// "" leaves that end open).
func parseSpan(cmd, from, to string) (f, t time.Time, err error) {
	for _, x := range []struct {
		s   string
		dst *time.Time
		n   string
	}{{from, &f, "--from"}, {to, &t, "--to"}} {
		if x.s == "" {
			continue
		}
		v, perr := time.Parse(time.RFC3339Nano, x.s)
		if perr != nil {
			return f, t, usagef("%s: %s %q is not RFC 3339 (e.g. 2026-03-01T10:00:00Z)", cmd, x.n, x.s)
		}
		*x.dst = v
	}
	return f, t, nil
}
