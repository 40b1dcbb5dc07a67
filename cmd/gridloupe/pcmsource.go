package main

import (
	"context"
	"fmt"
	"io"
	"log/slog"
	"os"
	"strings"

	"github.com/gridloupe/gridloupe/config"
	"github.com/gridloupe/gridloupe/stream"
	"github.com/gridloupe/gridloupe/stream/pcm"
)

// pcmInput is an opened raw or GLF1 stream.
type pcmInput struct {
	src   stream.FrameReader
	raw   *pcm.Raw
	glf1  *pcm.GLF1
	conn  *pcm.Conn
	close func() error
}

// where says how far reading got, for the cut-stream warning.
func (p *pcmInput) where() string {
	switch {
	case p.glf1 != nil:
		return fmt.Sprintf("byte offset %d", p.glf1.Offset())
	case p.raw == nil:
		return "the end of the link"
	}
	return fmt.Sprintf("byte offset %d", p.raw.Offset())
}

// losses describes the GLF1 frames dropped and samples missing, "" when none.
func (p *pcmInput) losses() string {
	var st pcm.GLF1Stats
	switch {
	case p.glf1 != nil:
		st = p.glf1.Stats()
	case p.conn != nil:
		st = p.conn.GLF1Stats()
	default:
		return ""
	}
	if st.Bad == 0 && st.Missing == 0 && st.Restarts == 0 {
		return ""
	}
	return fmt.Sprintf("%d bad frames skipped, %d bytes skipped, %d samples per channel missing (windows flagged gap), %d sender restarts",
		st.Bad, st.Skipped, st.Missing, st.Restarts)
}

// newPCMInput wraps r (named name in messages) as a raw or GLF1 reader of
// channels channels in the named format and framing ("" = raw).
func newPCMInput(name string, r io.Reader, channels int, format, framing string) (*pcmInput, error) {
	f, ok := pcm.ParseFormat(format)
	if !ok {
		return nil, usagef("pcm format %q: allowed are %s", format, strings.Join(pcm.FormatNames(), ", "))
	}
	p := &pcmInput{close: func() error { return nil }}
	switch framing {
	case "", config.FramingRaw:
		raw, err := pcm.NewRaw(name, r, channels, f)
		if err != nil {
			return nil, usagef("%v", err)
		}
		p.src, p.raw = raw, raw
	case config.FramingGLF1:
		g, err := pcm.NewGLF1(name, r, channels, f)
		if err != nil {
			return nil, usagef("%v", err)
		}
		p.src, p.glf1 = g, g
	default:
		return nil, usagef("pcm framing %q: allowed are raw, glf1", framing)
	}
	return p, nil
}

// openPCMPath opens a pcm stream from a file or FIFO, or standard input
// for "-". live reports a stream that is not a regular file (its end is a
// failure for run, and it must never be blocked).
func openPCMPath(path string, stdin io.Reader, channels int, format, framing string) (p *pcmInput, live bool, err error) {
	var r io.Reader = stdin
	closeFn := func() error { return nil }
	name := "standard input"
	live = true
	if path != "-" {
		f, err := os.Open(path)
		if err != nil {
			return nil, false, fmt.Errorf("input: %w", err)
		}
		if st, err := f.Stat(); err == nil && st.Mode().IsRegular() {
			live = false
		}
		r, closeFn, name = f, f.Close, path
	} else if stdin == nil {
		return nil, false, usagef("pcm: standard input is not available")
	}
	p, err = newPCMInput(name, r, channels, format, framing)
	if err != nil {
		_ = closeFn()
		return nil, false, err
	}
	p.close = closeFn
	return p, live, nil
}

// pcmRate is the sample rate of a pcm stream: sample_rate_hz, required.
func pcmRate(cfg *config.Config, input string) (float64, error) {
	if cfg.SampleRateHz <= 0 {
		return 0, usagef("%s: %s is a raw PCM stream, which carries no sample rate; set sample_rate_hz in the config", cfg.Path, input)
	}
	return cfg.SampleRateHz, nil
}

// openPCMSource opens the daemon's pcm source: a path (file, FIFO, "-")
// or a TCP sender (connect), redialled with backoff until ctx ends. live
// reports a source that is not a regular file.
func openPCMSource(ctx context.Context, cfg *config.Config, channels int, log *slog.Logger) (p *pcmInput, live bool, err error) {
	s := cfg.Source
	if _, err := pcmRate(cfg, "source"); err != nil {
		return nil, false, err
	}
	if s.Connect == "" {
		return openPCMPath(s.Path, os.Stdin, channels, s.Format, s.Framing)
	}
	f, ok := pcm.ParseFormat(s.Format)
	if !ok {
		return nil, false, usagef("%s: source.format %q: allowed are %s", cfg.Path, s.Format, strings.Join(pcm.FormatNames(), ", "))
	}
	c, err := pcm.Dial(ctx, pcm.ConnConfig{Addr: s.Connect, Channels: channels, Format: f, GLF1: s.Framing == config.FramingGLF1,
		SampleRate: cfg.SampleRateHz, Logger: log})
	if err != nil {
		return nil, false, usagef("%s: source: %v", cfg.Path, err)
	}
	return &pcmInput{src: c, close: c.Close, conn: c}, true, nil
}
