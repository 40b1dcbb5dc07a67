package replaycmd

import (
	"bufio"
	"context"
	"errors"
	"flag"
	"fmt"
	"io"
	"math"
	"os"
	"path/filepath"
	"runtime/pprof"
	"strings"
	"time"

	"golang.org/x/term"

	"github.com/gridloupe/gridloupe/cmd/internal/cli"
	"github.com/gridloupe/gridloupe/cmd/internal/progress"
	"github.com/gridloupe/gridloupe/config"
	"github.com/gridloupe/gridloupe/metrics"
	"github.com/gridloupe/gridloupe/metrics/limits"
	"github.com/gridloupe/gridloupe/stream"
	"github.com/gridloupe/gridloupe/stream/encode"
	"github.com/gridloupe/gridloupe/stream/input"
	"github.com/gridloupe/gridloupe/stream/pcm"
)

// helpBody is replay's help after the usage line.
const helpBody = `

Analyses a recorded waveform file and prints one record per interval:
synchronized 10-cycle (50 Hz) or 12-cycle (60 Hz) windows of about 200 ms,
or their 3 s and 10 min aggregates (IEC 61000-4-30 aggregation).

INPUT is a CSV file (a header row naming the config's channels, optional
first column t in seconds, '#' comments) or a WAV file (16/24/32-bit PCM or
32-bit float, channels in config order); - reads CSV from standard input.
A .cfg INPUT is a COMTRADE recording (IEEE C37.111-1999/2013, the .dat
beside it in ASCII, BINARY, BINARY32 or FLOAT32): channels are matched by
name to the analog channel ids (or by comtrade: N), values are primary
(a·x + b, times primary/secondary for secondary channels), and the
recording's first-sample time is the default --start.
With --pcm FORMAT, INPUT is a raw PCM stream (a file, a FIFO, or - for
standard input): interleaved little-endian samples in config channel order,
bare or in GLF1 frames (--framing glf1); sample_rate_hz is then required.
Values are raw; the config's scale and offset turn them into volts and
amperes. Samples a stream lost are flagged gap, never stitched.

Flags:
`

// Run is the replay command: args are its flags and INPUT, prog is how
// the help's usage line names it ("gridloupe replay" for the gateway
// executable). The output, the warnings on stderr and the errors do not
// depend on prog. Help returns cli.ErrHelp.
func Run(ctx context.Context, prog string, args []string, stdin io.Reader, stdout, stderr io.Writer) error {
	f, err := parseReplayFlags(prog, args, stdout)
	if err != nil {
		return err
	}
	stopProfile, err := startCPUProfile()
	if err != nil {
		return err
	}
	defer stopProfile()
	iv, fmtKind, base, err := f.check()
	if err != nil {
		return err
	}
	cfg, err := config.Load(f.config)
	if err != nil {
		return &cli.UsageError{Err: err}
	}
	setup, cal, err := SetupFromConfig(cfg)
	if err != nil {
		return err
	}
	job := replayJob{cfg: cfg, setup: setup, cal: cal, base: base, iv: iv, format: fmtKind, input: f.input, events: f.events}
	if f.pcm != "" {
		return replayPCM(ctx, job, f.pcm, f.framing, stdin, stdout, stderr)
	}
	if IsCOMTRADE(f.input) {
		return replayCOMTRADE(ctx, job, stdout, stderr)
	}
	return replayRecording(ctx, job, f.progress, stdin, stdout, stderr)
}

// replayFlags are replay's command line, as given.
type replayFlags struct {
	config, interval, format, start, events, pcm, framing string
	progress                                              bool
	input                                                 string // the one INPUT argument
}

// parseReplayFlags parses replay's command line; --config and exactly one
// INPUT are required.
func parseReplayFlags(prog string, args []string, stdout io.Writer) (*replayFlags, error) {
	fs := flag.NewFlagSet("replay", flag.ContinueOnError)
	f := &replayFlags{}
	fs.StringVar(&f.config, "config", "", "config `FILE` (YAML); required")
	fs.StringVar(&f.interval, "interval", "200ms", "interval to print: "+strings.Join(metrics.IntervalLabels()[:3], ", "))
	fs.StringVar(&f.format, "format", "jsonl", "output format: jsonl (unrounded), csv, table (per-phase blocks for people, with the IEEE 519 reference) or wide (one row per record)")
	fs.StringVar(&f.start, "start", "", "wall time of the first sample, RFC 3339 (default 1970-01-01T00:00:00Z)")
	fs.StringVar(&f.events, "events", "", "also write the voltage events (dips, swells, interruptions) to `FILE`, as JSON Lines")
	fs.BoolVar(&f.progress, "progress", true, "show a progress bar on stderr when it is a terminal")
	fs.StringVar(&f.pcm, "pcm", "", "INPUT is a raw PCM stream in `FORMAT`: "+strings.Join(pcm.FormatNames(), ", "))
	fs.StringVar(&f.framing, "framing", "raw", "with --pcm: raw (bare samples) or glf1 (frames with sample index and CRC)")
	fs.Usage = func() {
		fmt.Fprintf(fs.Output(), "Usage: %s --config FILE [flags] INPUT%s", prog, helpBody)
		fs.PrintDefaults()
	}
	if err := cli.ParseFlags(fs, args, stdout); err != nil {
		return nil, err
	}
	if f.config == "" {
		return nil, cli.Usagef("replay: --config FILE is required")
	}
	if fs.NArg() != 1 {
		return nil, cli.Usagef("replay: want exactly one INPUT file, got %d", fs.NArg())
	}
	f.input = fs.Arg(0)
	return f, nil
}

// check validates the flags' values and returns the parsed interval,
// output format and start time (zero when --start is not given).
func (f *replayFlags) check() (metrics.Interval, encode.Format, time.Time, error) {
	var base time.Time
	if f.pcm != "" {
		if _, ok := pcm.ParseFormat(f.pcm); !ok {
			return 0, 0, base, cli.Usagef("replay: --pcm %q: allowed are %s", f.pcm, strings.Join(pcm.FormatNames(), ", "))
		}
		if f.framing != config.FramingRaw && f.framing != config.FramingGLF1 {
			return 0, 0, base, cli.Usagef("replay: --framing %q: allowed are raw, glf1", f.framing)
		}
	} else if f.framing != config.FramingRaw {
		return 0, 0, base, cli.Usagef("replay: --framing applies to --pcm input only")
	}
	iv, ok := metrics.ParseInterval(f.interval)
	if !ok || iv == metrics.Int2h {
		return 0, 0, base, cli.Usagef("replay: --interval %q: allowed are 200ms, 3s, 10min", f.interval)
	}
	fmtKind, ok := encode.ParseFormat(f.format)
	if !ok {
		return 0, 0, base, cli.Usagef("replay: --format %q: allowed are %s", f.format, strings.Join(encode.FormatNames(), ", "))
	}
	if f.start != "" {
		t, err := time.Parse(time.RFC3339Nano, f.start)
		if err != nil {
			return 0, 0, base, cli.Usagef("replay: --start %q is not RFC 3339 (e.g. 2026-03-01T10:00:00Z)", f.start)
		}
		base = t.UTC()
	}
	return iv, fmtKind, base, nil
}

// replayRecording replays a CSV or WAV recording (a file or "-" for
// standard input), with a progress bar when asked and stderr is a
// terminal.
func replayRecording(ctx context.Context, job replayJob, progress bool, stdin io.Reader, stdout, stderr io.Writer) error {
	r, closeIn, err := openReplayInput(job.input, stdin, stderr, progress)
	if err != nil {
		return err
	}
	defer closeIn()
	if job.input == "-" {
		job.input = "stdin"
	}
	names := make([]string, len(job.setup.Channels))
	for i, ch := range job.setup.Channels {
		names[i] = ch.Name
	}
	src, inRate, where, err := OpenInput(job.input, r, names)
	if err != nil {
		return err
	}
	if ex, ok := src.(interface{ Extra() []string }); ok && len(ex.Extra()) > 0 {
		fmt.Fprintf(stderr, "gridloupe: warning: %s: columns not in the config are ignored: %s\n", job.input, strings.Join(ex.Extra(), ", "))
	}
	if job.rate, err = ResolveRate(job.cfg, inRate, job.input); err != nil {
		return err
	}
	job.src, job.where = src, where
	return replayAnalyse(ctx, job, stdout, stderr)
}

// startCPUProfile writes a CPU profile of the replay to
// $GRIDLOUPE_CPUPROFILE, if set (for speed investigations; see
// DEVELOPERS.md). The returned function stops it.
func startCPUProfile() (func(), error) {
	path := os.Getenv("GRIDLOUPE_CPUPROFILE")
	if path == "" {
		return func() {}, nil
	}
	f, err := os.Create(path)
	if err != nil {
		return nil, fmt.Errorf("cpu profile: %w", err)
	}
	if err := pprof.StartCPUProfile(f); err != nil {
		f.Close()
		return nil, fmt.Errorf("cpu profile: %w", err)
	}
	return func() { pprof.StopCPUProfile(); f.Close() }, nil
}

// replayJob is one replay's analysis: an opened source and what to print.
type replayJob struct {
	cfg    *config.Config
	setup  *metrics.Setup
	cal    []stream.Cal
	rate   float64
	base   time.Time
	iv     metrics.Interval
	format encode.Format
	src    stream.FrameReader
	input  string
	where  func() string // where reading stopped, for the cut-recording warning
	losses func() string // what a stream lost, "" when nothing; nil = never
	events string        // --events FILE, "" = none
}

// replayBuffers is the records per batch handed to the encoding goroutine
// (two batches: the analysis runs at most twice that far ahead).
const replayBuffers = 4

// replayAnalyse runs the pipeline over j.src and prints j.iv's records.
func replayAnalyse(ctx context.Context, j replayJob, stdout, stderr io.Writer) error {
	cfg, setup, rate, inPath, fmtKind, iv, src, where := j.cfg, j.setup, j.rate, j.input, j.format, j.iv, j.src, j.where
	if err := CheckRate(cfg, rate); err != nil {
		return err
	}
	pc := PipelineConfig(cfg, setup, j.cal, rate)
	pc.Base = j.base
	var evf *eventFile
	if j.events != "" {
		var err error
		if evf, err = createEventFile(j.events); err != nil {
			return err
		}
		defer evf.Close()
		pc.EventSink = evf
	}
	p, err := stream.New(pc)
	if err != nil {
		return err
	}

	out := bufio.NewWriterSize(stdout, 64<<10)
	enc, err := newEncoder(fmtKind, out, setup, cfg)
	if err != nil {
		return err
	}
	// Encoding and writing run on a goroutine of their own (encode.Async),
	// beside decoding and the per-sample path; the output, its order and
	// the errors are those of the encoder itself.
	async := encode.NewAsync(enc, setup, replayBuffers)
	defer async.Close()
	agg := stream.NewIntervals(setup, iv)
	emit := func(r *metrics.Record) error {
		if r.Interval != iv {
			return nil
		}
		return async.Write(r)
	}
	runErr := p.Run(ctx, src, func(r *metrics.Record) error { return agg.Add(r, emit) })
	var cut bool
	if errors.Is(runErr, input.ErrTruncated) {
		cut, runErr = true, nil
	}
	if runErr == nil {
		runErr = agg.Flush(emit)
	}
	if err := async.Flush(); err != nil && runErr == nil {
		runErr = err
	}
	if err := async.Close(); err != nil && runErr == nil {
		runErr = err
	}
	if err := out.Flush(); err != nil && runErr == nil {
		runErr = err
	}
	if evf != nil {
		if err := evf.Close(); err != nil && runErr == nil {
			runErr = err
		}
	}
	if runErr != nil {
		return runErr
	}
	if j.losses != nil {
		if l := j.losses(); l != "" {
			fmt.Fprintf(stderr, "gridloupe: warning: %s: %s\n", inPath, l)
		}
	}
	switch {
	case p.Leftover() > 0:
		fmt.Fprintf(stderr, "gridloupe: warning: %s: input ends mid-window at %s; the last %d samples (%.3f s) are not in the output\n",
			inPath, where(), p.Leftover(), float64(p.Leftover())/rate)
	case cut:
		fmt.Fprintf(stderr, "gridloupe: warning: %s: input ends with an incomplete row or frame after %s; it is not in the output\n",
			inPath, where())
	}
	return nil
}

func newEncoder(k encode.Format, w io.Writer, s *metrics.Setup, cfg *config.Config) (encode.Writer, error) {
	enc, err := encode.New(k, w, s, encode.TableOptions{Title: cfg.Site, Reference: IEEEReference(cfg)})
	if err != nil {
		return nil, &cli.UsageError{Err: err}
	}
	return enc, nil
}

// IEEEReference is the IEEE 519-2014 reference of the config's site for
// the tables: Table 1 by the bus voltage, Table 2 by isc_a/il_a (the
// strictest row without isc_a; no TDD limit without il_a).
func IEEEReference(cfg *config.Config) *encode.Reference {
	if !(cfg.Nominal.VoltageV > 0) {
		return nil
	}
	bus := cfg.BusVoltageV()
	_, vthd := limits.VoltageLimits(bus)
	ref := &encode.Reference{Edition: limits.Edition, BusV: bus, VTHDPct: vthd}
	if cfg.ILA > 0 {
		ratio := math.NaN()
		ref.IRowWhy = "isc_a unknown: the strictest row"
		if cfg.IscA > 0 {
			ratio = cfg.IscA / cfg.ILA
			ref.IRowWhy = fmt.Sprintf("ISC/IL %.1f", ratio)
		}
		row := limits.CurrentLimits(ratio)
		ref.IRow, ref.TDDPct = row.RatioLabel, row.TDD
	}
	return ref
}

// openReplayInput opens replay's INPUT: a file, with a progress line on a
// terminal stderr when show is set, or standard input for "-" (read as
// CSV). The returned function closes what was opened.
func openReplayInput(inPath string, stdin io.Reader, stderr io.Writer, show bool) (io.Reader, func(), error) {
	if inPath == "-" {
		if stdin == nil {
			return nil, nil, cli.Usagef("replay: INPUT - reads standard input, which is not available")
		}
		return stdin, func() {}, nil
	}
	f, err := os.Open(inPath)
	if err != nil {
		return nil, nil, fmt.Errorf("input: %w", err)
	}
	var size int64
	if st, err := f.Stat(); err == nil {
		size = st.Size()
	}
	if !show || size == 0 || !isTerminal(stderr) {
		return f, func() { f.Close() }, nil
	}
	line := progress.New(stderr, filepath.Base(inPath), size, nil)
	return io.TeeReader(f, line), func() { line.Finish(); f.Close() }, nil
}

// OpenInput opens a CSV or WAV source by file extension. It returns the
// source, the sample rate the file carries (0 if none) and a function that
// says where in the file reading stopped (for the cut-recording warning).
func OpenInput(path string, r io.Reader, names []string) (stream.FrameReader, float64, func() string, error) {
	if strings.EqualFold(filepath.Ext(path), ".wav") {
		w, err := input.NewWAV(path, r, len(names))
		if err != nil {
			return nil, 0, nil, err
		}
		return w, w.SampleRate(), func() string { return fmt.Sprintf("byte offset %d", w.Offset()) }, nil
	}
	c, err := input.NewCSV(path, r, names)
	if err != nil {
		return nil, 0, nil, err
	}
	return c, c.SampleRate(), func() string { return fmt.Sprintf("line %d", c.Line()) }, nil
}

func isTerminal(w io.Writer) bool {
	f, ok := w.(*os.File)
	return ok && term.IsTerminal(int(f.Fd()))
}

// replayPCM replays a raw or GLF1 stream from a file, a FIFO or stdin:
// job without its source, in the --pcm format and --framing given.
func replayPCM(ctx context.Context, job replayJob, format, framing string, stdin io.Reader, stdout, stderr io.Writer) error {
	rate, err := PCMRate(job.cfg, job.input)
	if err != nil {
		return err
	}
	in, _, err := OpenPCMPath(job.input, stdin, len(job.setup.Channels), format, framing)
	if err != nil {
		return err
	}
	defer in.Close()
	job.rate, job.src, job.where, job.losses = rate, in.Src, in.Where, in.Losses
	return replayAnalyse(ctx, job, stdout, stderr)
}
