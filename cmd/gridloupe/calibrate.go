package main

import (
	"context"
	"flag"
	"fmt"
	"io"
	"math"
	"strconv"
	"strings"

	"github.com/gridloupe/gridloupe/config"
	"github.com/gridloupe/gridloupe/metrics"
	"github.com/gridloupe/gridloupe/metrics/calib"
)

const calibrateHelp = `Usage: gridloupe calibrate --config FILE --reference READINGS [--seconds N] [INPUT]

Compares a few seconds of INPUT (a CSV or WAV recording taken while the
reference instrument read) or, without INPUT, of the config's source, with
readings from a reference instrument, and prints the corrected channel
entries (scale, offset, delay_us) to paste into the config.

READINGS is a comma-separated list of key=value:
  <channel>=<rms>   a channel's RMS in V or A, e.g. va=231.2,ia=118.5
  pf_<phase>=<pf>   the true power factor of a phase (wye, single-phase)
  dpf_<phase>=<pf>  its displacement power factor (cos φ of the fundamentals)
  dpf_total=<pf>    the three-phase displacement power factor (also delta);
                    the same delay goes to every current channel
Power factors are magnitudes; the lead or lag sense is the measurement's.
A scale correction beyond ±30 % or an angle beyond ±20° is refused: that is
a wrong ratio or a wiring mistake (run gridloupe wiring first).

Take the reference readings at the same time as the recording, on the same
conductors. Only qualified personnel connect a reference instrument in a live
cabinet; never open-circuit a loaded CT.

Flags:
`

func cmdCalibrate(ctx context.Context, args []string, stdout, stderr io.Writer) error {
	fs := flag.NewFlagSet("calibrate", flag.ContinueOnError)
	cfgPath := fs.String("config", "", "config `FILE` (YAML); required")
	refStr := fs.String("reference", "", "reference `READINGS`, e.g. \"va=231.2,ia=118.5,pf_a=0.93\"; required")
	seconds := fs.Float64("seconds", 3, "seconds of signal to analyse")
	fs.Usage = func() {
		fmt.Fprint(fs.Output(), calibrateHelp)
		fs.PrintDefaults()
	}
	if err := parseFlags(fs, args, stdout); err != nil {
		return err
	}
	if err := checkSnapshotFlags("calibrate", *cfgPath, fs.NArg(), *seconds); err != nil {
		return err
	}
	if *refStr == "" {
		return usagef("calibrate: --reference READINGS is required, such as \"va=231.2,ia=118.5,pf_a=0.93\"")
	}
	refs, err := calib.ParseReference(*refStr)
	if err != nil {
		return usagef("calibrate: --reference: %v", err)
	}
	cfg, err := config.Load(*cfgPath)
	if err != nil {
		return &usageError{Err: err}
	}
	snap, err := takeSnapshot(ctx, cfg, fs.Arg(0), *seconds, stderr)
	if err != nil {
		return err
	}
	corr, err := calib.Solve(snap.setup, snap.rec, refs, cfg.Nominal.FrequencyHz)
	if err != nil {
		return usagef("calibrate: --reference %v", err)
	}
	printCalibration(stdout, cfg, snap, corr)
	return nil
}

func printCalibration(w io.Writer, cfg *config.Config, snap *snapshot, corr []calib.Correction) {
	fmt.Fprintf(w, "# gridloupe calibrate: %s, %.1f s (%d windows) against the reference readings\n", cfg.Site, snap.seconds, snap.windows)
	for _, c := range wiringCautions {
		fmt.Fprintf(w, "# CAUTION: %s\n", c)
	}
	factor := make([]float64, len(cfg.Channels))
	delay := make([]float64, len(cfg.Channels))
	changed := make([]bool, len(cfg.Channels))
	for i := range factor {
		factor[i] = 1
	}
	for _, c := range corr {
		ch := cfg.Channels[c.Channel]
		changed[c.Channel] = true
		factor[c.Channel] *= c.Factor
		delay[c.Channel] += c.DelayS * 1e6
		if !c.Angle {
			unit := "V"
			if ch.Kind == config.KindCurrent {
				unit = "A"
			}
			fmt.Fprintf(w, "# %s: measured %.4g %s, reference %.4g %s: scale and offset × %.6f\n", ch.Name, c.Measured, unit, c.Ref, unit, c.Factor)
		} else {
			fmt.Fprintf(w, "# %s: %s measured %s, reference %.4g: delay_us %+.2f (the current is read %.3f° %s)\n",
				ch.Name, c.Key, pfText(c.Measured), c.Ref, c.DelayS*1e6, math.Abs(c.DelayS*360*snapFreq(snap, cfg)), earlier(c.DelayS))
		}
	}
	fmt.Fprintln(w, "# Paste over these channels' entries; keys not shown stay as they are.")
	fmt.Fprintln(w, "channels:")
	for i, ch := range cfg.Channels {
		if !changed[i] {
			continue
		}
		fmt.Fprintf(w, "  - {name: %s, kind: %s, phase: %s, scale: %s, offset: %s", ch.Name, ch.Kind, ch.Phase,
			num7(ch.Scale*factor[i]), num7(ch.Offset*factor[i]))
		if ch.FullScale != 0 {
			fmt.Fprintf(w, ", full_scale: %s", num7(ch.FullScale))
		}
		fmt.Fprintf(w, ", delay_us: %s}\n", strconv.FormatFloat(math.Round((ch.DelayUS+delay[i])*1000)/1000, 'f', -1, 64))
	}
}

func snapFreq(snap *snapshot, cfg *config.Config) float64 {
	if f := snap.rec.FreqHz; !metrics.IsNull(f) && f > 0 {
		return f
	}
	return cfg.Nominal.FrequencyHz
}

func earlier(d float64) string {
	if d < 0 { // a negative delay_us: the sample is treated as taken early
		return "earlier"
	}
	return "later"
}

func pfText(x float64) string {
	if metrics.IsNull(x) {
		return "null"
	}
	return fmt.Sprintf("%.4f", x)
}

// num7 prints x with 7 significant digits, enough for a calibration.
func num7(x float64) string {
	s := strconv.FormatFloat(x, 'g', 7, 64)
	if strings.ContainsAny(s, "e") {
		s = strconv.FormatFloat(x, 'f', -1, 64)
	}
	return s
}
