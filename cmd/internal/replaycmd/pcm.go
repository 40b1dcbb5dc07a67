package replaycmd

import (
	"fmt"
	"io"
	"os"
	"strings"

	"github.com/gridloupe/gridloupe/cmd/internal/cli"
	"github.com/gridloupe/gridloupe/config"
	"github.com/gridloupe/gridloupe/stream"
	"github.com/gridloupe/gridloupe/stream/pcm"
)

// PCMInput is an opened raw or GLF1 stream: a file, a FIFO, standard input
// or (NewLinkInput) a network link opened by the caller.
type PCMInput struct {
	Src   stream.FrameReader
	Close func() error

	raw   *pcm.Raw
	glf1  *pcm.GLF1
	stats func() pcm.GLF1Stats // a link's frame counters; nil for a path
}

// NewLinkInput wraps a stream that is not a path (a TCP sender): src
// delivers the frames, closeFn releases it and stats returns its GLF1
// counters.
func NewLinkInput(src stream.FrameReader, closeFn func() error, stats func() pcm.GLF1Stats) *PCMInput {
	return &PCMInput{Src: src, Close: closeFn, stats: stats}
}

// Where says how far reading got, for the cut-stream warning.
func (p *PCMInput) Where() string {
	switch {
	case p.glf1 != nil:
		return fmt.Sprintf("byte offset %d", p.glf1.Offset())
	case p.raw == nil:
		return "the end of the link"
	}
	return fmt.Sprintf("byte offset %d", p.raw.Offset())
}

// Losses describes the GLF1 frames dropped and samples missing, "" when none.
func (p *PCMInput) Losses() string {
	var st pcm.GLF1Stats
	switch {
	case p.glf1 != nil:
		st = p.glf1.Stats()
	case p.stats != nil:
		st = p.stats()
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
func newPCMInput(name string, r io.Reader, channels int, format, framing string) (*PCMInput, error) {
	f, ok := pcm.ParseFormat(format)
	if !ok {
		return nil, cli.Usagef("pcm format %q: allowed are %s", format, strings.Join(pcm.FormatNames(), ", "))
	}
	p := &PCMInput{Close: func() error { return nil }}
	switch framing {
	case "", config.FramingRaw:
		raw, err := pcm.NewRaw(name, r, channels, f)
		if err != nil {
			return nil, cli.Usagef("%v", err)
		}
		p.Src, p.raw = raw, raw
	case config.FramingGLF1:
		g, err := pcm.NewGLF1(name, r, channels, f)
		if err != nil {
			return nil, cli.Usagef("%v", err)
		}
		p.Src, p.glf1 = g, g
	default:
		return nil, cli.Usagef("pcm framing %q: allowed are raw, glf1", framing)
	}
	return p, nil
}

// OpenPCMPath opens a pcm stream from a file or FIFO, or standard input
// for "-". live reports a stream that is not a regular file (its end is a
// failure for run, and it must never be blocked).
func OpenPCMPath(path string, stdin io.Reader, channels int, format, framing string) (p *PCMInput, live bool, err error) {
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
		return nil, false, cli.Usagef("pcm: standard input is not available")
	}
	p, err = newPCMInput(name, r, channels, format, framing)
	if err != nil {
		_ = closeFn()
		return nil, false, err
	}
	p.Close = closeFn
	return p, live, nil
}

// PCMRate is the sample rate of a pcm stream: sample_rate_hz, required.
func PCMRate(cfg *config.Config, input string) (float64, error) {
	if cfg.SampleRateHz <= 0 {
		return 0, cli.Usagef("%s: %s is a raw PCM stream, which carries no sample rate; set sample_rate_hz in the config", cfg.Path, input)
	}
	return cfg.SampleRateHz, nil
}
