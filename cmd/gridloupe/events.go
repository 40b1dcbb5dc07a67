package main

import (
	"bufio"
	"bytes"
	"errors"
	"flag"
	"fmt"
	"io"
	"os"
	"time"

	"github.com/gridloupe/gridloupe/cmd/gridloupe/internal/gateway"
	"github.com/gridloupe/gridloupe/cmd/gridloupe/internal/wavesvg"
	"github.com/gridloupe/gridloupe/store"
)

const eventsHelp = `Usage: gridloupe events --store DB [--from T] [--to T] [--format table|jsonl]

Lists the stored voltage events (dips, swells, interruptions), oldest
first: the replay --events record (with seq) as JSON Lines, or a table.
While 'gridloupe run' holds the store, the request goes through the
daemon's local socket (FILE.sock); otherwise the file is opened read-only.

Flags:
`

const waveformHelp = `Usage: gridloupe waveform --store DB --id ID -o FILE.svg

Draws one stored event's waveform capture as an SVG: every voltage channel,
the Urms(1/2) trace with the threshold and hysteresis lines, and every
current channel, on one time axis in ms from the event start. ID is the
event's id as 'gridloupe events' lists it.

Flags:
`

// waveCaution is the safety line at the foot of every drawing.
const waveCaution = "Live conductors can kill: qualified personnel, rated sensors and CTs, never open-circuit a loaded CT; a monitor, not a protective device; follow local codes."

// storeRequest answers req through a running daemon's socket, or from the
// file opened read-only when no daemon holds it.
func storeRequest(cmd, dbPath string, timeout time.Duration, req gateway.ExportRequest, out io.Writer, direct func(db *store.DB) error) error {
	if _, err := os.Stat(dbPath); err != nil {
		return fmt.Errorf("%s: %w", cmd, err)
	}
	sock := gateway.SocketPath(dbPath)
	if _, err := os.Stat(sock); err == nil {
		err := gateway.RequestExport(sock, req, out)
		switch {
		case err == nil:
			return nil
		case errors.Is(err, gateway.ErrExport):
			return &usageError{Err: err}
		case !errors.Is(err, gateway.ErrNoDaemon):
			return fmt.Errorf("%s: %w", cmd, err)
		}
	}
	db, err := store.OpenReadOnly(dbPath, timeout)
	if err != nil {
		return fmt.Errorf("%s: %w", cmd, err)
	}
	defer db.Close()
	if err := direct(db); err != nil {
		return fmt.Errorf("%s: %w", cmd, err)
	}
	return nil
}

func cmdEvents(args []string, stdout, stderr io.Writer) error {
	fs := flag.NewFlagSet("events", flag.ContinueOnError)
	dbPath := fs.String("store", "", "bbolt store `FILE`; required")
	from := fs.String("from", "", "first event start, RFC 3339 (default: the oldest)")
	to := fs.String("to", "", "end (exclusive), RFC 3339 (default: the newest)")
	format := fs.String("format", "table", "output format: table or jsonl")
	timeout := fs.Duration("timeout", 2*time.Second, "how long to wait for the store's file lock")
	fs.Usage = func() {
		fmt.Fprint(fs.Output(), eventsHelp)
		fs.PrintDefaults()
	}
	if err := parseFlags(fs, args, stdout); err != nil {
		return err
	}
	if *dbPath == "" || fs.NArg() != 0 {
		return usagef("events: --store FILE is required and takes no arguments")
	}
	if *format != "table" && *format != "jsonl" {
		return usagef("events: --format %q: allowed are table, jsonl", *format)
	}
	req := gateway.ExportRequest{What: gateway.WhatEvents, Format: *format}
	var err error
	if req.From, req.To, err = parseSpan("events", *from, *to); err != nil {
		return err
	}
	out := bufio.NewWriterSize(stdout, 64<<10)
	err = storeRequest("events", *dbPath, *timeout, req, out, func(db *store.DB) error { return gateway.WriteEvents(out, db, req) })
	if ferr := out.Flush(); err == nil && ferr != nil {
		err = fmt.Errorf("events: writing the output: %w", ferr)
	}
	return err
}

func cmdWaveform(args []string, stdout, stderr io.Writer) error {
	fs := flag.NewFlagSet("waveform", flag.ContinueOnError)
	dbPath := fs.String("store", "", "bbolt store `FILE`; required")
	id := fs.String("id", "", "the event's `ID` (see gridloupe events); required")
	outPath := fs.String("o", "", "SVG `FILE` to write; required")
	site := fs.String("site", "", "title for the drawing (default: the store file's name)")
	timeout := fs.Duration("timeout", 2*time.Second, "how long to wait for the store's file lock")
	fs.Usage = func() {
		fmt.Fprint(fs.Output(), waveformHelp)
		fs.PrintDefaults()
	}
	if err := parseFlags(fs, args, stdout); err != nil {
		return err
	}
	if *dbPath == "" || *id == "" || *outPath == "" || fs.NArg() != 0 {
		return usagef("waveform: --store FILE, --id ID and -o FILE.svg are required, and it takes no arguments")
	}
	var ans bytes.Buffer
	req := gateway.ExportRequest{What: gateway.WhatWaveform, ID: *id}
	err := storeRequest("waveform", *dbPath, *timeout, req, &ans, func(db *store.DB) error { return gateway.WriteWaveform(&ans, db, *id) })
	if err != nil {
		return err
	}
	rec, w, err := gateway.ReadWaveform(bytes.NewReader(ans.Bytes()))
	if err != nil {
		return fmt.Errorf("waveform: %w", err)
	}
	title := *site
	if title == "" {
		title = *dbPath
	}
	svg := wavesvg.Draw(w, &rec, title, waveCaution)
	if err := os.WriteFile(*outPath, svg, 0o644); err != nil {
		return fmt.Errorf("waveform: %w", err)
	}
	fmt.Fprintf(stdout, "wrote %s: %s %s, %d channels, %d samples each\n", *outPath, rec.Kind, rec.ID, len(w.Channels), rec.WaveformSamples)
	return nil
}
