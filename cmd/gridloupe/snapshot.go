package main

import (
	"context"
	"errors"
	"fmt"
	"io"
	"os"

	"github.com/gridloupe/gridloupe/cmd/internal/replaycmd"
	"github.com/gridloupe/gridloupe/config"
	"github.com/gridloupe/gridloupe/metrics"
	"github.com/gridloupe/gridloupe/stream"
	"github.com/gridloupe/gridloupe/stream/input"
	"github.com/gridloupe/gridloupe/stream/sim"
)

// errEnough stops a snapshot's pipeline once it holds enough windows.
var errEnough = errors.New("snapshot: enough windows")

// snapshot is a few seconds of a source, aggregated into one record.
type snapshot struct {
	setup   *metrics.Setup
	rec     *metrics.Record
	windows int
	seconds float64
}

// checkSnapshotFlags checks what the commissioning commands share: a
// config, at most one INPUT, and a span of more than 0 up to 600 s.
func checkSnapshotFlags(cmd, cfgPath string, nargs int, seconds float64) error {
	switch {
	case cfgPath == "":
		return usagef("%s: --config FILE is required", cmd)
	case nargs > 1:
		return usagef("%s: want at most one INPUT file, got %d", cmd, nargs)
	case !(seconds > 0) || seconds > 600:
		return usagef("%s: --seconds %v: allowed are more than 0 up to 600", cmd, seconds)
	}
	return nil
}

// takeSnapshot analyses up to seconds of INPUT (a CSV or WAV recording),
// or of the config's source when inPath is empty, and aggregates every
// window into one record (DESIGN Aggregation rules). The commissioning
// commands (wiring, calibrate) judge that record.
func takeSnapshot(ctx context.Context, cfg *config.Config, inPath string, seconds float64, stderr io.Writer) (*snapshot, error) {
	setup, cal, err := replaycmd.SetupFromConfig(cfg)
	if err != nil {
		return nil, err
	}
	names := make([]string, len(setup.Channels))
	for i, ch := range setup.Channels {
		names[i] = ch.Name
	}
	var src stream.FrameReader
	var rate float64
	path := inPath
	if path == "" {
		switch cfg.Source.Kind {
		case config.SourceSim:
			rate = cfg.SampleRateHz
			if rate == 0 {
				rate = sim.DefaultSampleRate
			}
			sc := simConfig(cfg, rate)
			sc.Limit = uint64(seconds*rate) + 1
			s, err := sim.New(sc)
			if err != nil {
				return nil, usagef("%s: source: %v", cfg.Path, err)
			}
			src = s
		case config.SourceCSV, config.SourceWAV:
			path = cfg.Source.Path
		case "":
			return nil, usagef("%s: no source configured; give a recording as INPUT", cfg.Path)
		default:
			return nil, usagef("%s: source.kind %q: this command reads sim, csv or wav sources; give a recording as INPUT", cfg.Path, cfg.Source.Kind)
		}
	}
	if src == nil {
		f, err := os.Open(path)
		if err != nil {
			return nil, fmt.Errorf("input: %w", err)
		}
		defer f.Close()
		r, inRate, _, err := replaycmd.OpenInput(path, f, names)
		if err != nil {
			return nil, err
		}
		if ex, ok := r.(interface{ Extra() []string }); ok && len(ex.Extra()) > 0 {
			fmt.Fprintf(stderr, "gridloupe: warning: %s: columns not in the config are ignored: %v\n", path, ex.Extra())
		}
		if rate, err = replaycmd.ResolveRate(cfg, inRate, path); err != nil {
			return nil, err
		}
		src = r
	}
	if err := replaycmd.CheckRate(cfg, rate); err != nil {
		return nil, err
	}
	p, err := stream.New(replaycmd.PipelineConfig(cfg, setup, cal, rate))
	if err != nil {
		return nil, err
	}
	agg := metrics.NewAggregator(setup)
	snap := &snapshot{setup: setup}
	runErr := p.Run(ctx, src, func(r *metrics.Record) error {
		agg.Add(r)
		snap.windows++
		snap.seconds += r.DurationS
		if snap.seconds >= seconds {
			return errEnough
		}
		return nil
	})
	if runErr != nil && !errors.Is(runErr, errEnough) && !errors.Is(runErr, input.ErrTruncated) {
		return nil, runErr
	}
	if snap.windows == 0 {
		return nil, fmt.Errorf("%s: no complete window in the input (a window is 10 or 12 cycles)", cfg.Path)
	}
	snap.rec = metrics.NewRecord(setup)
	agg.Result(snap.rec)
	return snap, nil
}
