package main

import (
	"context"
	"encoding/json"
	"flag"
	"fmt"
	"io"
	"math"

	"github.com/gridloupe/gridloupe/config"
	"github.com/gridloupe/gridloupe/metrics"
	"github.com/gridloupe/gridloupe/metrics/wiringcheck"
)

const wiringHelp = `Usage: gridloupe wiring --config FILE [--format text|json] [--seconds N] [INPUT]

Checks a hook-up on site: analyses a few seconds of INPUT (a CSV or WAV
recording) or, without INPUT, of the config's source, and says in plain
words what is wrong: voltage rotation, a reversed CT, two CTs swapped, a CT
on the wrong phase, a dead channel, a voltage off its declared value, or a
current more than 60° from its voltage. Works for wye, delta and
single-phase. With too little load the CTs are not judged (a finding says
so). Exit status 0 when the verdict is ok, 1 when it is check.

The judgement assumes a drive or motor load that lags, or leads by less than
about 30°: a current that leads its voltage by more can read as a CT on the
wrong phase.

Work in a live cabinet is for qualified personnel only. Short a CT's
secondary before you touch its leads; never open-circuit a loaded CT.

Flags:
`

// wiringCautions open every text report of the check.
var wiringCautions = []string{
	"Work in a live cabinet is for qualified personnel only, with PPE for the arc-flash hazard and under local electrical codes.",
	"Short a CT's secondary before you move or swap its leads; never open-circuit a loaded CT.",
	"Use voltage inputs and CTs rated for the measurement category (CAT III or better in a drive cabinet).",
	"gridloupe is a monitor, not a protective device.",
}

func cmdWiring(ctx context.Context, args []string, stdout, stderr io.Writer) error {
	fs := flag.NewFlagSet("wiring", flag.ContinueOnError)
	cfgPath := fs.String("config", "", "config `FILE` (YAML); required")
	format := fs.String("format", "text", "output format: text or json")
	seconds := fs.Float64("seconds", 3, "seconds of signal to analyse (at least one window)")
	fs.Usage = func() {
		fmt.Fprint(fs.Output(), wiringHelp)
		fs.PrintDefaults()
	}
	if err := parseFlags(fs, args, stdout); err != nil {
		return err
	}
	if err := checkSnapshotFlags("wiring", *cfgPath, fs.NArg(), *seconds); err != nil {
		return err
	}
	if *format != "text" && *format != "json" {
		return usagef("wiring: --format %q: allowed are text, json", *format)
	}
	cfg, err := config.Load(*cfgPath)
	if err != nil {
		return &usageError{Err: err}
	}
	snap, err := takeSnapshot(ctx, cfg, fs.Arg(0), *seconds, stderr)
	if err != nil {
		return err
	}
	rep := wiringcheck.Check(snap.setup, snap.rec, wiringcheck.Options{NominalV: cfg.Nominal.VoltageV, LoadA: loadFloor(cfg)})
	if *format == "json" {
		b, err := json.Marshal(struct {
			wiringcheck.Report
			Caution string `json:"caution"`
		}{rep, joinCautions()})
		if err != nil {
			return fmt.Errorf("wiring: %w", err)
		}
		fmt.Fprintf(stdout, "%s\n", b)
	} else {
		printWiring(stdout, cfg, snap, rep)
	}
	if rep.Verdict != wiringcheck.VerdictOK {
		return fmt.Errorf("wiring: verdict %s: %d finding(s) to fix", rep.Verdict, len(rep.Findings))
	}
	return nil
}

func joinCautions() string {
	s := ""
	for i, c := range wiringCautions {
		if i > 0 {
			s += " "
		}
		s += c
	}
	return s
}

// loadFloor is the current under which the CTs are not judged: 5 % of
// il_a, else of nominal.current_a, else of the largest current full_scale;
// 1 A with none of them.
func loadFloor(cfg *config.Config) float64 {
	base := cfg.ILA
	if base == 0 {
		base = cfg.Nominal.CurrentA
	}
	if base == 0 {
		for _, ch := range cfg.Channels {
			if ch.Kind == config.KindCurrent {
				base = math.Max(base, ch.FullScale)
			}
		}
	}
	if base == 0 {
		return 1
	}
	return wiringcheck.DefaultLoadFrac * base
}

func printWiring(w io.Writer, cfg *config.Config, snap *snapshot, rep wiringcheck.Report) {
	fmt.Fprintf(w, "gridloupe wiring check: %s (%s, declared %g V)\n\n", cfg.Site, cfg.Wiring, cfg.Nominal.VoltageV)
	fmt.Fprintln(w, "SAFETY")
	for _, c := range wiringCautions {
		fmt.Fprintf(w, "  * %s\n", c)
	}
	fmt.Fprintf(w, "\nAnalysed %.1f s (%d windows).\n", snap.seconds, snap.windows)
	for i, ch := range snap.setup.Channels {
		v := snap.rec.Channels[i]
		unit := "V"
		if ch.Kind == metrics.Current {
			unit = "A"
		}
		fmt.Fprintf(w, "  %-8s %10s %s  at %s\n", ch.Name, fmtNum(v.RMS, 2), unit, fmtDeg(v.H[0].PhaseDeg))
	}
	rot := rep.Rotation
	if rot == "" {
		rot = "not known (needs three voltages)"
	}
	fmt.Fprintf(w, "\nRotation: %s\n", rot)
	if len(rep.Findings) == 0 {
		fmt.Fprintln(w, "\nVerdict: ok. Voltages, rotation and every CT agree with the config.")
		return
	}
	fmt.Fprintf(w, "\nVerdict: check. %d finding(s):\n", len(rep.Findings))
	for i, f := range rep.Findings {
		fmt.Fprintf(w, "  %d. [%s", i+1, f.Kind)
		if len(f.Phases) > 0 {
			fmt.Fprintf(w, ", phase %v", f.Phases)
		}
		fmt.Fprintf(w, "] %s.\n", f.Text)
	}
	fmt.Fprintln(w, "\nFix one thing at a time and run the check again.")
}

func fmtNum(x float64, dec int) string {
	if metrics.IsNull(x) {
		return "—"
	}
	return fmt.Sprintf("%.*f", dec, x)
}

func fmtDeg(x float64) string {
	if metrics.IsNull(x) {
		return "— (no angle)"
	}
	return fmt.Sprintf("%7.1f°", x)
}
