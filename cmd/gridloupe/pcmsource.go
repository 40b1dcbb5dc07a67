package main

import (
	"context"
	"log/slog"
	"os"
	"strings"

	"github.com/gridloupe/gridloupe/cmd/internal/replaycmd"
	"github.com/gridloupe/gridloupe/config"
	"github.com/gridloupe/gridloupe/stream/pcm"
	"github.com/gridloupe/gridloupe/stream/pcm/pcmtcp"
)

// openPCMSource opens the daemon's pcm source: a path (file, FIFO, "-",
// shared with replay) or a TCP sender (connect), redialled with backoff
// until ctx ends. live reports a source that is not a regular file.
func openPCMSource(ctx context.Context, cfg *config.Config, channels int, log *slog.Logger) (p *replaycmd.PCMInput, live bool, err error) {
	s := cfg.Source
	if _, err := replaycmd.PCMRate(cfg, "source"); err != nil {
		return nil, false, err
	}
	if s.Connect == "" {
		return replaycmd.OpenPCMPath(s.Path, os.Stdin, channels, s.Format, s.Framing)
	}
	f, ok := pcm.ParseFormat(s.Format)
	if !ok {
		return nil, false, usagef("%s: source.format %q: allowed are %s", cfg.Path, s.Format, strings.Join(pcm.FormatNames(), ", "))
	}
	c, err := pcmtcp.Dial(ctx, pcmtcp.ConnConfig{Addr: s.Connect, Channels: channels, Format: f, GLF1: s.Framing == config.FramingGLF1,
		SampleRate: cfg.SampleRateHz, Logger: log})
	if err != nil {
		return nil, false, usagef("%s: source: %v", cfg.Path, err)
	}
	return replaycmd.NewLinkInput(c, c.Close, c.GLF1Stats), true, nil
}
