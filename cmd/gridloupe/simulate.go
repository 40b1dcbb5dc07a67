package main

import (
	"bufio"
	"context"
	"errors"
	"flag"
	"fmt"
	"io"
	"math"
	"os"
	"slices"
	"strconv"
	"time"

	"github.com/gridloupe/gridloupe/config"
	"github.com/gridloupe/gridloupe/metrics"
	"github.com/gridloupe/gridloupe/stream/sim"
)

const simulateHelp = `Usage: gridloupe simulate --config FILE [flags] -o OUT.csv

Writes a recording of the built-in drive-cabinet simulator as a CSV file
(first column t in seconds, then the config's channels as raw values), for
trying replay, for tests and for demos. The simulated cabinet follows the
config: nominal voltage and frequency, il_a, isc_a, channels and their
scale/offset. Six-pulse drive currents; the input reactor's condition and
the load are set by flags.

Flags:
`

// simConfig translates the config into the simulator's settings.
func simConfig(cfg *config.Config, fs float64) sim.Config {
	sc := sim.Config{
		SampleRate:  fs,
		FrequencyHz: cfg.Nominal.FrequencyHz,
		VoltageV:    cfg.Nominal.VoltageV,
		IscA:        cfg.IscA,
		ILA:         cfg.ILA,
		Seed:        1,
	}
	if sc.ILA == 0 {
		sc.ILA = cfg.Nominal.CurrentA
	}
	for _, x := range cfg.Disturbances {
		sc.Dips = append(sc.Dips, sim.Dip{At: x.At, Depth: x.LevelPct / 100, Duration: x.Duration, Phases: x.Phases})
	}
	if cfg.Wiring == config.WiringDelta {
		// the simulator's VoltageV is phase-to-neutral; a three-wire feed
		// has no neutral, so no zero-sequence 3rd from single-phase loads
		sc.VoltageV /= math.Sqrt(3)
		sc.NeutralI3A = -1
	}
	for _, ch := range cfg.Channels {
		k := metrics.Voltage
		if ch.Kind == "current" {
			k = metrics.Current
		}
		c := sim.Chan{Name: ch.Name, Kind: k, Phase: ch.Phase[0], Scale: ch.Scale, Offset: ch.Offset}
		if len(ch.Phase) == 2 {
			c.To = ch.Phase[1]
		}
		c.Share = circuitShare(cfg, ch.Name)
		sc.Channels = append(sc.Channels, c)
	}
	return sc
}

// circuitShare is the fraction of the simulated load a current channel
// carries on a bus with circuits: a circuit whose il_a is at least the
// others' sum is the incomer and carries it all; the others split it in
// proportion to their il_a (equally without). 1 without circuits.
func circuitShare(cfg *config.Config, name string) float64 {
	if len(cfg.Circuits) < 2 {
		return 1
	}
	il := func(c config.Circuit) float64 {
		if c.ILA > 0 {
			return c.ILA
		}
		return cfg.ILA
	}
	var total, biggest float64
	big := -1
	for i, c := range cfg.Circuits {
		total += il(c)
		if il(c) > biggest {
			biggest, big = il(c), i
		}
	}
	if big >= 0 && biggest < total-biggest {
		big = -1 // no incomer: every circuit is a drive
	}
	drives := total
	n := len(cfg.Circuits)
	if big >= 0 {
		drives -= biggest
		n--
	}
	for i, c := range cfg.Circuits {
		if !slices.Contains(c.Currents, name) {
			continue
		}
		switch {
		case i == big:
			return 1
		case drives > 0:
			return il(c) / drives
		}
		return 1 / float64(n)
	}
	return 1
}

func cmdSimulate(ctx context.Context, args []string, stdout, stderr io.Writer) error {
	fs := flag.NewFlagSet("simulate", flag.ContinueOnError)
	cfgPath := fs.String("config", "", "config `FILE` (YAML); required")
	outPath := fs.String("o", "", "output CSV `FILE`; required")
	dur := fs.Duration("duration", 3*time.Second, "simulated time to record")
	load := fs.Float64("load", 0.8, "load as a fraction of il_a")
	cond := fs.Float64("filter", 1, "input reactor/filter condition: 1 works as designed, 0 has no effect")
	seed := fs.Uint64("seed", 1, "noise seed")
	fs.Usage = func() {
		fmt.Fprint(fs.Output(), simulateHelp)
		fs.PrintDefaults()
	}
	if err := parseFlags(fs, args, stdout); err != nil {
		return err
	}
	if *cfgPath == "" || *outPath == "" || fs.NArg() != 0 {
		return usagef("simulate: --config FILE and -o FILE are required, and nothing else")
	}
	if *dur <= 0 || *load < 0 || *load > 2 || *cond < 0 || *cond > 1 {
		return usagef("simulate: --duration must be positive, --load within 0..2, --filter within 0..1")
	}
	cfg, err := config.Load(*cfgPath)
	if err != nil {
		return &usageError{Err: err}
	}
	rate := cfg.SampleRateHz
	if rate == 0 {
		rate = sim.DefaultSampleRate
	}
	sc := simConfig(cfg, rate)
	sc.Seed = *seed
	sc.Limit = uint64(math.Round(dur.Seconds() * rate))
	src, err := sim.New(sc)
	if err != nil {
		return &usageError{Err: fmt.Errorf("%s: %w", *cfgPath, err)}
	}
	src.SetLoad(*load)
	src.SetFilterCondition(*cond)

	f, err := os.Create(*outPath)
	if err != nil {
		return fmt.Errorf("simulate: %w", err)
	}
	w := bufio.NewWriterSize(f, 64<<10)
	fmt.Fprintf(w, "# gridloupe simulator: %s, invented drive cabinet; load %.2f of IL, filter condition %.2f, seed %d\n", cfg.Site, *load, *cond, *seed)
	w.WriteString("t")
	for _, ch := range cfg.Channels {
		w.WriteString("," + ch.Name)
	}
	w.WriteByte('\n')
	nch := len(cfg.Channels)
	buf := make([]float64, 256*nch)
	var line []byte
	var idx uint64
	for {
		if ctx.Err() != nil {
			break
		}
		n, rerr := src.ReadFrames(buf)
		for i := range n {
			line = strconv.AppendFloat(line[:0], float64(idx)/rate, 'f', 7, 64)
			for c := range nch {
				line = append(line, ',')
				line = strconv.AppendFloat(line, buf[i*nch+c], 'f', 3, 64)
			}
			line = append(line, '\n')
			w.Write(line)
			idx++
		}
		if errors.Is(rerr, io.EOF) {
			break
		}
		if rerr != nil {
			f.Close()
			return fmt.Errorf("simulate: %w", rerr)
		}
	}
	if err := errors.Join(w.Flush(), f.Close()); err != nil {
		return fmt.Errorf("simulate: %s: %w", *outPath, err)
	}
	fmt.Fprintf(stderr, "gridloupe: wrote %d frames (%.3f s at %v Hz) to %s\n", idx, float64(idx)/rate, rate, *outPath)
	return nil
}
