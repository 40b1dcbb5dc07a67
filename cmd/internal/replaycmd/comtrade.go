package replaycmd

import (
	"context"
	"errors"
	"fmt"
	"io"
	"path/filepath"
	"strings"

	"github.com/gridloupe/gridloupe/cmd/internal/cli"
	"github.com/gridloupe/gridloupe/config"
	"github.com/gridloupe/gridloupe/stream/comtrade"
)

// IsCOMTRADE reports whether path names a COMTRADE .cfg file.
func IsCOMTRADE(path string) bool { return strings.EqualFold(filepath.Ext(path), ".cfg") }

// OpenCOMTRADE opens the recording whose .cfg is path for the config's
// channels (matched by name to the channel ids, or by `comtrade: N`). A
// .cfg that cannot be used is a usage error (exit 2), like a CSV header.
func OpenCOMTRADE(cfg *config.Config, path string) (*comtrade.Recording, float64, error) {
	names := make([]string, len(cfg.Channels))
	idx := make([]int, len(cfg.Channels))
	for i, ch := range cfg.Channels {
		names[i], idx[i] = ch.Name, ch.Comtrade
	}
	rec, err := comtrade.Open(path, names, idx)
	if err != nil {
		if errors.Is(err, comtrade.ErrConfig) || errors.Is(err, comtrade.ErrRate) {
			return nil, 0, &cli.UsageError{Err: err}
		}
		return nil, 0, err
	}
	rate, err := ResolveRate(cfg, rec.Rate, path)
	if err != nil {
		rec.Close()
		return nil, 0, err
	}
	return rec, rate, nil
}

// comtradeWhere says where reading a .dat file stopped.
func comtradeWhere(rec *comtrade.Recording) func() string {
	return func() string {
		if l := rec.Data.Line(); l > 0 {
			return fmt.Sprintf("%s line %d", rec.DatPath, l)
		}
		return fmt.Sprintf("%s byte offset %d", rec.DatPath, rec.Data.Offset())
	}
}

// replayCOMTRADE replays the COMTRADE recording j.input (j.src, j.rate and
// j.where are filled here); without --start the .cfg's first-sample time
// is the base.
func replayCOMTRADE(ctx context.Context, j replayJob, stdout, stderr io.Writer) error {
	rec, rate, err := OpenCOMTRADE(j.cfg, j.input)
	if err != nil {
		return err
	}
	defer rec.Close()
	if j.base.IsZero() {
		j.base = rec.Start
	}
	j.src, j.rate, j.where = rec.Data, rate, comtradeWhere(rec)
	return replayAnalyse(ctx, j, stdout, stderr)
}
