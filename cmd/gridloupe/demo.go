package main

import (
	"context"
	"flag"
	"fmt"
	"io"
	"log/slog"
	"os"
	"path/filepath"
	"strings"
	"time"

	"github.com/gridloupe/gridloupe/config"
	"github.com/gridloupe/gridloupe/metrics"
	"github.com/gridloupe/gridloupe/metrics/alarm"
	"github.com/gridloupe/gridloupe/stream/sim"
)

const demoHelp = `Usage: gridloupe demo [flags]

Runs the whole gateway in one process for about a minute, with nothing to
set up: the built-in simulator of an invented drive cabinet (North Weir
pumping station, cabinet DC-2: 400/230 V, 50 Hz, three 30 kW six-pulse pump
drives with 3 % input reactors) at accelerated time, an MQTT broker embedded
on loopback, and a store in a temporary folder. The simulated input reactor
wears and recovers, so current and voltage distortion rise and fall: the
alarms below raise and clear. A live table shows the 3 s and 10 min values;
a summary closes the run. Ctrl-C ends it early the same way.

Flags:
`

// demoConfig is the demo's config; STORE is replaced by the store path.
const demoConfig = `# gridloupe demo: North Weir pumping station, cabinet DC-2 (invented site)
site: north-weir-dc2
gateway: dc2-demo
nominal: {frequency_hz: 50, voltage_v: 230, current_a: 160}
wiring: wye
sample_rate_hz: 10240
harmonics: all
il_a: 160
isc_a: 6100
channels:
  - {name: va, kind: voltage, phase: a, full_scale: 450}
  - {name: vb, kind: voltage, phase: b, full_scale: 450}
  - {name: vc, kind: voltage, phase: c, full_scale: 450}
  - {name: ia, kind: current, phase: a, full_scale: 400}
  - {name: ib, kind: current, phase: b, full_scale: 400}
  - {name: ic, kind: current, phase: c, full_scale: 400}
  - {name: in, kind: current, phase: n, full_scale: 400}
source: {kind: sim, speed: SPEED}
store: {path: STORE, commit_every: 2s}
mqtt: {broker: embedded, telemetry: [3s, 10min]}
alarms:
  # The reactor of drive cabinet DC-2 keeps its current TDD near a third of
  # IL at this load; above 45 % it has lost much of its effect.
  - {name: reactor-wear, metric: tdd_h50_pct, channel: ia, level: 3s, above: 45,
     deadband: 3, on_delay: 30s, off_delay: 30s, severity: warning, min_load_pct: 10}
  # IEEE 519-2014 Table 1, bus at or below 1 kV: voltage THD 8 %.
  - {name: voltage-thd, metric: thd_h50_pct, channel: va, level: 3s, above: 8,
     deadband: 0.5, on_delay: 30s, off_delay: 30s, severity: warning}
  - {name: low-pf, metric: pf, phase: total, level: 3s, below: 0.85,
     deadband: 0.02, on_delay: 30s, off_delay: 30s, severity: info, min_load_pct: 20}
`

func cmdDemo(ctx context.Context, args []string, stdout, stderr io.Writer) error {
	fs := flag.NewFlagSet("demo", flag.ContinueOnError)
	dur := fs.Duration("duration", 60*time.Second, "how long to run (wall time)")
	speed := fs.Float64("speed", 30, "time acceleration of the simulator (30 = half an hour per minute)")
	dir := fs.String("dir", "", "folder for the store (default: a new temporary folder)")
	stopAfter := fs.Duration("stop-after", 0, "also stop after this much simulated time (with --speed 0: as fast as the machine allows)")
	verbose := fs.Bool("v", false, "log the gateway's info messages on stderr")
	fs.Usage = func() {
		fmt.Fprint(fs.Output(), demoHelp)
		fs.PrintDefaults()
	}
	if err := parseFlags(fs, args, stdout); err != nil {
		return err
	}
	if *dur <= 0 || *speed < 0 || *stopAfter < 0 || (*speed == 0 && *stopAfter == 0) || fs.NArg() != 0 {
		return usagef("demo: --duration must be positive, --speed positive (or 0 with --stop-after); no arguments")
	}
	if *dir == "" {
		d, err := os.MkdirTemp("", "gridloupe-demo-")
		if err != nil {
			return fmt.Errorf("demo: %w", err)
		}
		*dir = d
	}
	dbPath := filepath.Join(*dir, "gridloupe.db")
	text := strings.NewReplacer("STORE", dbPath, "SPEED", fmt.Sprint(*speed)).Replace(demoConfig)
	cfg, err := config.Parse("demo.yaml", []byte(text))
	if err != nil {
		return fmt.Errorf("demo config: %w", err)
	}

	pace := fmt.Sprintf("simulated at %g× real time", *speed)
	if *speed == 0 {
		pace = "simulated as fast as this machine allows"
	}
	fmt.Fprintln(stdout, "gridloupe demo: North Weir pumping station, cabinet DC-2 (invented site),", pace)
	fmt.Fprintln(stdout, "CAUTION: a demo on simulated data. On a real cabinet, installation is work for qualified personnel under local")
	fmt.Fprintln(stdout, "electrical codes, with rated sensors (CAT III or better); never open-circuit a loaded CT secondary; gridloupe is")
	fmt.Fprintln(stdout, "not a protective device.")
	fmt.Fprintln(stdout)

	tab := &liveTable{w: stdout, every: 2 * time.Second}
	var d *daemon
	var raised, cleared int
	runCtx, cancel := context.WithTimeout(ctx, *dur)
	defer cancel()
	lvl := slog.LevelError
	if *verbose {
		lvl = slog.LevelInfo
	}
	start := time.Now()
	err = runDaemon(runCtx, cfg, daemonOptions{logFormat: "text", logLevel: lvl,
		brokerAddr: "127.0.0.1:0", stopAfter: *stopAfter,
		simTweak: func(sc *sim.Config) {
			// wear and recovery of the input reactor over 20 simulated minutes
			sc.Filter = sim.FilterProfile{Period: 20 * time.Minute, Worst: 0.3}
		},
		onReady: func(dd *daemon) {
			d = dd
			if d.sim != nil {
				d.sim.SetLoad(0.8)
			}
			tab.setup = dd.setup
			if d.brk != nil {
				fmt.Fprintf(stdout, "MQTT broker (embedded) on %s, topics under %s/#\n\n", d.brk.Addr(), cfg.MQTT.Base)
			}
		},
		onRecord: tab.record,
		onTransition: func(t alarm.Transition) {
			if t.Raised {
				raised++
			} else {
				cleared++
			}
			tab.transition(t)
		},
	}, stderr)
	if err != nil {
		return err
	}
	wall := time.Since(start)

	// Summary.
	fmt.Fprintln(stdout)
	fmt.Fprintf(stdout, "summary after %.0f s of wall time:\n", wall.Seconds())
	if d != nil && d.gw != nil {
		st := d.gw.Stats()
		fmt.Fprintf(stdout, "  measured:  %d windows of 10 cycles (%.1f simulated minutes), %d aggregates (3 s, 10 min, 2 h)\n",
			st.Windows, float64(st.Windows)*0.2/60, st.Aggregates)
		fmt.Fprintf(stdout, "  stored:    %d records in %s\n", st.Stored, dbPath)
		fmt.Fprintf(stdout, "  alarms:    %d raised, %d cleared\n", raised, cleared)
		if d.pub != nil {
			ps := d.pub.Stats()
			fmt.Fprintf(stdout, "  published: %d messages acknowledged by the broker (queued in the outbox: %d)\n", ps.Acked, st.Queued)
		}
	}
	fmt.Fprintf(stdout, "  look back: gridloupe export --store %s --interval 10min --format csv\n", dbPath)
	fmt.Fprintf(stdout, "  clean up:  rm -r %s\n", *dir)
	return nil
}

// liveTable prints the demo's rows: the latest 3 s values at most every
// `every` of wall time, every 10 min and 2 h value, and alarm transitions.
// Its header uses the record's own key names. Called from one goroutine.
type liveTable struct {
	w     io.Writer
	every time.Duration
	setup *metrics.Setup
	last  time.Time
	rows  int
}

func (t *liveTable) header() {
	// the record's own key names; (V) and (I) say which channel of the phase
	fmt.Fprintf(t.w, "%-19s %-8s %-5s %8s %8s %15s %15s %15s %6s %8s  %s\n", "start", "interval", "phase",
		"rms(V)", "rms(I)", "thd_h50_pct(V)", "thd_h50_pct(I)", "tdd_h50_pct(I)", "pf", "freq_hz", "active alarms")
}

func (t *liveTable) record(r *metrics.Record, active []string) {
	if r.Interval == metrics.Int3s && time.Since(t.last) < t.every {
		return
	}
	t.last = time.Now()
	if t.rows%24 == 0 {
		t.header()
	}
	alarms := strings.Join(active, ",")
	if alarms == "" {
		alarms = "-"
	}
	s := t.setup
	for k, pr := range s.Pairs {
		v, i := r.Channels[pr.V], r.Channels[pr.I]
		st, iv, fq, al := "", "", "", ""
		if k == 0 {
			st = r.Start.UTC().Format("2006-01-02 15:04:05")
			iv = r.Interval.String()
			fq = num(r.FreqHz, 3)
			al = alarms
		}
		pf := metrics.Null()
		if k < len(r.Phases) {
			pf = r.Phases[k].PF
		}
		fmt.Fprintf(t.w, "%-19s %-8s %-5c %8s %8s %15s %15s %15s %6s %8s  %s\n", st, iv, pr.Phase,
			num(v.RMS, 1), num(i.RMS, 1), num(v.THDH50Pct, 2), num(i.THDH50Pct, 2), num(i.TDDH50Pct, 2), num(pf, 3), fq, al)
		t.rows++
	}
}

func (t *liveTable) transition(a alarm.Transition) {
	state := "CLEARED"
	if a.Raised {
		state = "RAISED "
	}
	fmt.Fprintf(t.w, ">> %s %-13s %s = %s (threshold %g) at %s\n", state, a.Rule, a.Metric, num(a.Value, 2), a.Threshold,
		a.Time.UTC().Format("15:04:05"))
	t.rows++
}

func num(v float64, dec int) string {
	if metrics.IsNull(v) {
		return "-"
	}
	return fmt.Sprintf("%.*f", dec, v)
}
