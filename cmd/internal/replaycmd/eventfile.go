package replaycmd

import (
	"bufio"
	"fmt"
	"os"

	"github.com/gridloupe/gridloupe/config"
	"github.com/gridloupe/gridloupe/metrics/events"
	"github.com/gridloupe/gridloupe/stream"
	"github.com/gridloupe/gridloupe/stream/encode"
)

// EventsConfig turns the config's events keys into the detector's
// thresholds; the pipeline fills the signal fields.
func EventsConfig(cfg *config.Config) *events.Config {
	e := cfg.Events
	return &events.Config{DipPct: e.DipPct, SwellPct: e.SwellPct, InterruptionPct: e.InterruptionPct,
		HysteresisPct: e.HysteresisPct, PreCycles: e.PreCycles, PostCycles: e.PostCycles, MaxCaptureS: e.MaxCaptureS}
}

// eventFile writes event records as JSON Lines (replay --events FILE).
type eventFile struct {
	path string
	f    *os.File
	w    *bufio.Writer
	buf  []byte
	n    int
}

func createEventFile(path string) (*eventFile, error) {
	f, err := os.Create(path)
	if err != nil {
		return nil, fmt.Errorf("events file: %w", err)
	}
	return &eventFile{path: path, f: f, w: bufio.NewWriter(f)}, nil
}

// Capture is not needed: replay writes summaries only.
func (e *eventFile) Capture(*stream.VoltageEvent, events.Waveform) error { return nil }

func (e *eventFile) Event(v *stream.VoltageEvent) error {
	e.buf = append(encode.AppendEvent(e.buf[:0], &v.Record), '\n')
	e.n++
	if _, err := e.w.Write(e.buf); err != nil {
		return fmt.Errorf("events file %s: %w", e.path, err)
	}
	return nil
}

// Close flushes and closes the file; it may be called twice.
func (e *eventFile) Close() error {
	if e.f == nil {
		return nil
	}
	err := e.w.Flush()
	if cerr := e.f.Close(); err == nil {
		err = cerr
	}
	e.f = nil
	if err != nil {
		return fmt.Errorf("events file %s: %w", e.path, err)
	}
	return nil
}
