package gateway

import (
	"bufio"
	"encoding/base64"
	"encoding/json"
	"fmt"
	"io"
	"strings"

	"github.com/gridloupe/gridloupe/metrics/events"
	"github.com/gridloupe/gridloupe/store"
	"github.com/gridloupe/gridloupe/stream/encode"
)

// What an ExportRequest asks for.
const (
	WhatEvents   = "events"   // the stored voltage events in [From, To), Format jsonl or table
	WhatWaveform = "waveform" // one event (ID) and its waveform
)

// WriteEvents writes the stored events of req's span to w: JSON Lines
// (the replay --events record, with seq) or a table for people.
func WriteEvents(w io.Writer, db *store.DB, req ExportRequest) error {
	table := req.Format == "table"
	if !table && req.Format != "" && req.Format != "jsonl" {
		return fmt.Errorf("%w: format %q: allowed are table, jsonl", ErrExport, req.Format)
	}
	if table {
		fmt.Fprintf(w, "%-36s %-12s %-27s %10s %-12s %-8s %10s %8s\n", "id", "event", "start", "duration_s", "channels", "worst", "extreme_v", "extreme_%")
	}
	var b []byte
	n := 0
	err := db.Events(req.From, req.To, func(r events.Record) error {
		n++
		if table {
			mark := ""
			if r.Unfinished {
				mark = " (unfinished)"
			}
			_, err := fmt.Fprintf(w, "%-36s %-12s %-27s %10.3f %-12s %-8s %10.1f %8.1f%s\n", r.ID, r.Kind, encode.FormatTime(r.Start),
				r.DurationS, strings.Join(r.Channels, ","), r.Worst, r.ExtremeV, r.ExtremePct, mark)
			return err
		}
		b = append(encode.AppendEvent(b[:0], &r), '\n')
		_, err := w.Write(b)
		return err
	})
	if err == nil && table && n == 0 {
		_, err = fmt.Fprintln(w, "(no events in this span)")
	}
	return err
}

// WriteWaveform writes event id as two lines: its JSON record and its
// stored waveform in base64 (read back with ReadWaveform).
func WriteWaveform(w io.Writer, db *store.DB, id string) error {
	r, wave, err := db.Event(id)
	if err != nil {
		return err
	}
	b := append(encode.AppendEvent(nil, &r), '\n')
	b = append(b, base64.StdEncoding.EncodeToString(wave)...)
	_, err = w.Write(append(b, '\n'))
	return err
}

// ReadWaveform parses WriteWaveform's answer.
func ReadWaveform(rd io.Reader) (events.Record, *store.Waveform, error) {
	var rec events.Record
	br := bufio.NewReaderSize(rd, 1<<20)
	head, err := br.ReadString('\n')
	if err != nil {
		return rec, nil, fmt.Errorf("%w: waveform answer: %w", ErrExportCut, err)
	}
	if rec, err = ParseEvent([]byte(head)); err != nil {
		return rec, nil, err
	}
	line, err := br.ReadString('\n')
	if err != nil {
		return rec, nil, fmt.Errorf("%w: waveform answer: %w", ErrExportCut, err)
	}
	raw, err := base64.StdEncoding.DecodeString(strings.TrimSpace(line))
	if err != nil {
		return rec, nil, fmt.Errorf("%w: waveform answer: %w", ErrExportCut, err)
	}
	w, err := store.DecodeWaveform(raw)
	return rec, w, err
}

// ParseEvent parses one event line (AppendEvent's form).
func ParseEvent(b []byte) (events.Record, error) {
	var r events.Record
	if err := json.Unmarshal(b, &r); err != nil {
		return events.Record{}, fmt.Errorf("%w: event line: %w", ErrExportCut, err)
	}
	return r, nil
}

// writeWhat answers the event requests of the export socket.
func writeWhat(w io.Writer, db *store.DB, req ExportRequest) error {
	if req.What == WhatWaveform {
		return WriteWaveform(w, db, req.ID)
	}
	return WriteEvents(w, db, req)
}
