package main

import (
	"context"
	"errors"
	"flag"
	"fmt"
	"io"
	"log/slog"
	"os"
	"path/filepath"
	"slices"
	"strings"
	"time"

	"github.com/gridloupe/gridloupe/cmd/internal/replaycmd"
	"github.com/gridloupe/gridloupe/config"
	"github.com/gridloupe/gridloupe/metrics"
	"github.com/gridloupe/gridloupe/metrics/alarm"
	"github.com/gridloupe/gridloupe/metrics/events"
	"github.com/gridloupe/gridloupe/stream/sim"
)

const demoHelp = `Usage: gridloupe demo [flags]

Runs the whole gateway in one process for about a minute, with nothing to
set up: the built-in simulator of an invented drive cabinet (North Weir
pumping station, cabinet DC-2: 400/230 V, 50 Hz, three 30 kW six-pulse pump
drives with 3 % input reactors) at accelerated time, an MQTT broker embedded
on loopback, and a store in a temporary folder. Site, channels and alarm
rules come from testdata/demo-dc2.yaml (run it from the repository's root,
or give --config); the demo prints the file's path and each rule. The
simulated input reactor wears and recovers, so current and voltage
distortion rise and fall: the alarms raise and clear. A live table shows the
3 s and 10 min values, labelled with their end, each watched value with its
alarm threshold beside it; a summary closes the run with commands to look
back that work as printed. Ctrl-C ends it early the same way.

Flags:
`

// demoConfigPath is the demo's config, relative to the repository root
// (where the README runs the demo).
const demoConfigPath = "testdata/demo-dc2.yaml"

func cmdDemo(ctx context.Context, args []string, stdout, stderr io.Writer) error {
	fs := flag.NewFlagSet("demo", flag.ContinueOnError)
	cfgPath := fs.String("config", demoConfigPath, "config `FILE` with the site and the alarm rules (its store.path and source.speed are replaced)")
	dur := fs.Duration("duration", 60*time.Second, "how long to run (wall time)")
	speed := fs.Float64("speed", 30, "time acceleration of the simulator (30 = half an hour per minute)")
	dir := fs.String("dir", "", "folder for the store: a new or empty one (default: a new temporary folder)")
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
	cfg, err := config.Load(*cfgPath)
	if errors.Is(err, os.ErrNotExist) && *cfgPath == demoConfigPath {
		return usagef("demo: %s not found: run the demo from the repository's root folder, or give --config FILE", demoConfigPath)
	}
	if err != nil {
		return &usageError{Err: err}
	}
	if cfg.Source.Kind != config.SourceSim {
		return usagef("demo: %s: source.kind must be sim", cfg.Path)
	}
	created, err := demoDir(dir)
	if err != nil {
		return err
	}
	dbPath := filepath.Join(*dir, "gridloupe.db")
	cfg.Store.Path, cfg.Source.Speed = dbPath, *speed

	printDemoIntro(stdout, cfg, *speed)

	setup, _, err := replaycmd.SetupFromConfig(cfg)
	if err != nil {
		return err
	}
	rules, err := alarmRules(cfg, setup)
	if err != nil {
		return err
	}
	tab := &liveTable{w: stdout, every: 2 * time.Second, cells: alarmCells(cfg)}
	tab.legend(cfg, rules)
	var d *daemon
	var raised, cleared, nEvents int
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
			sc.Filter = demoFilterProfile()
			if len(cfg.Disturbances) == 0 {
				sc.Dips = demoDisturbances()
			}
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
		onEvent: func(r events.Record) {
			nEvents++
			tab.event(r)
		},
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

	printDemoSummary(stdout, demoCounts{raised, cleared, nEvents}, d, wall, cfg.Path, dbPath, *dir, created)
	return nil
}

// demoDir prepares the demo's folder: a new temporary one when *dir is "",
// a new one when *dir does not exist, or an existing empty one; a folder
// holding anything is refused, so the clean-up advice never names files
// the demo did not write. created reports whether the demo made the folder.
func demoDir(dir *string) (created bool, err error) {
	if *dir == "" {
		d, err := os.MkdirTemp("", "gridloupe-demo-")
		if err != nil {
			return false, fmt.Errorf("demo: %w", err)
		}
		*dir = d
		return true, nil
	}
	ents, err := os.ReadDir(*dir)
	switch {
	case errors.Is(err, os.ErrNotExist):
		if err := os.MkdirAll(*dir, 0o755); err != nil {
			return false, fmt.Errorf("demo: %w", err)
		}
		return true, nil
	case err != nil:
		return false, usagef("demo: --dir %s: %v", *dir, err)
	case len(ents) > 0:
		return false, usagef("demo: --dir %s is not empty (%d entries): give a new or empty folder, so the demo's files stay apart from others", *dir, len(ents))
	}
	return false, nil
}

// selfCommand is how the user runs this program again: "go run
// ./cmd/gridloupe" under go run (or go test), else the executable's path.
func selfCommand() string {
	exe := os.Args[0]
	if strings.Contains(exe, "go-build") || strings.HasSuffix(exe, ".test") {
		return "go run ./cmd/gridloupe"
	}
	return exe
}

// liveTable prints the demo's rows: the latest 3 s values at most every
// `every` of wall time, every 10 min and 2 h value, and alarm transitions,
// in time order of their end (an aggregate is known when it ends, so each
// row is labelled with its end). A value an alarm rule watches carries the
// rule's threshold beside it (">45": raised above 45). Its header uses the
// record's own key names. Called from one goroutine.
type liveTable struct {
	w     io.Writer
	every time.Duration
	setup *metrics.Setup
	cells map[alarmCell]string // watched cells: their threshold text
	last  time.Time
	rows  int
	// alarms active at any time during the current 10 min interval
	during map[string]bool
}

// alarmCell names a cell of the live table: the metric, the channel or
// phase ("total" for the three-phase total), the level.
type alarmCell struct {
	metric, target string
	level          metrics.Interval
}

// alarmCells maps the cells the config's alarm rules watch to the text
// printed beside their values.
func alarmCells(cfg *config.Config) map[alarmCell]string {
	m := map[alarmCell]string{}
	for _, a := range cfg.Alarms {
		lv, _ := metrics.ParseInterval(a.Level)
		target := a.Channel
		if a.Metric == "pf" || a.Metric == "dpf" {
			target = a.Phase
			if target == "" {
				target = "total"
			}
		}
		switch {
		case a.Above != nil:
			m[alarmCell{a.Metric, target, lv}] = fmt.Sprintf(">%g", *a.Above)
		case a.Below != nil:
			m[alarmCell{a.Metric, target, lv}] = fmt.Sprintf("<%g", *a.Below)
		}
	}
	return m
}

// legend explains the rules before the first row.
func (t *liveTable) legend(cfg *config.Config, rules []alarm.Rule) {
	if len(cfg.Alarms) == 0 {
		fmt.Fprintln(t.w, "no alarm rules configured")
		return
	}
	fmt.Fprintln(t.w, "alarm rules (a watched value shows its threshold beside it, e.g. 33.29 >45):")
	for _, a := range cfg.Alarms {
		if a.Metric == config.MetricEvent {
			fmt.Fprintf(t.w, "  %-13s %s; %s\n", a.Name, eventAlarmText(cfg, a), a.Severity)
			continue
		}
		what, cond := a.Channel, ""
		if a.Metric == "pf" || a.Metric == "dpf" {
			what = "phase " + a.Phase
			if a.Phase == "" || a.Phase == "total" {
				what = "total"
			}
		}
		switch {
		case a.Above != nil:
			cond = fmt.Sprintf("above %g", *a.Above)
		case a.Below != nil:
			cond = fmt.Sprintf("below %g", *a.Below)
		}
		load := ""
		if a.MinLoadPct > 0 {
			load = fmt.Sprintf(", quiet below %g %% load", a.MinLoadPct)
		}
		fmt.Fprintf(t.w, "  %-13s %s %s %s for %v of %s values (clears %g back, after %v)%s; %s\n", a.Name, what, a.Metric, cond,
			a.OnDelay, a.Level, a.Deadband, a.OffDelay, load, a.Severity)
	}
	fmt.Fprintln(t.w, "rows: end of each interval (UTC); partial: a value shorter than its interval; 10min rows list the alarms")
	fmt.Fprintln(t.w, "active at any time during the interval, 3s rows those active at its end")
	fmt.Fprintln(t.w)
}

func (t *liveTable) header() {
	// the record's own key names; (V) and (I) say which channel of the phase
	fmt.Fprintf(t.w, "%-19s %-13s %-5s %7s %7s %15s %15s %11s %7s  %s\n", "end", "interval", "phase",
		"rms(V)", "rms(I)", "thd_h50_pct(V)", "tdd_h50_pct(I)", "pf", "freq_hz", "alarms")
}

// cell formats v with the threshold of the rule watching it, if any, in
// a suffix of fixed width so that the values stay aligned.
func (t *liveTable) cell(v float64, dec int, metric, target string, lv metrics.Interval) string {
	return fmt.Sprintf("%s %-5s", num(v, dec), t.cells[alarmCell{metric, target, lv}])
}

func (t *liveTable) record(r *metrics.Record, active []string) {
	if t.during == nil {
		t.during = map[string]bool{}
	}
	for _, a := range active {
		t.during[a] = true
	}
	if r.Interval == metrics.Int3s && time.Since(t.last) < t.every {
		return
	}
	list := active
	if r.Interval == metrics.Int10min {
		list = nil
		for a := range t.during {
			list = append(list, a)
		}
		slices.Sort(list)
		t.during = map[string]bool{}
		for _, a := range active {
			t.during[a] = true
		}
	} else {
		t.last = time.Now()
	}
	if t.rows%24 == 0 {
		t.header()
	}
	alarms := strings.Join(list, ",")
	if alarms == "" {
		alarms = "-"
	}
	end := r.Start.Add(time.Duration(r.DurationS * float64(time.Second))).UTC().Format("2006-01-02 15:04:05")
	iv := r.Interval.String()
	if r.Flags&metrics.FlagPartial != 0 {
		iv += " partial"
	}
	s := t.setup
	lv := r.Interval
	for k, pr := range s.Pairs {
		v, i := r.Channels[pr.V], r.Channels[pr.I]
		st, ivs, fq, al := "", "", "", ""
		if k == 0 {
			st, ivs, fq, al = end, iv, num(r.FreqHz, 3), alarms
		}
		pf := metrics.Null()
		if k < len(r.Phases) {
			pf = r.Phases[k].PF
		}
		vn, in := s.Channels[pr.V].Name, s.Channels[pr.I].Name
		fmt.Fprintf(t.w, "%-19s %-13s %-5c %7s %7s %15s %15s %11s %7s  %s\n", st, ivs, pr.Phase,
			num(v.RMS, 1), num(i.RMS, 1), t.cell(v.THDH50Pct, 2, "thd_h50_pct", vn, lv), t.cell(i.TDDH50Pct, 2, "tdd_h50_pct", in, lv),
			t.cell(pf, 3, "pf", string(pr.Phase), lv), fq, al)
		t.rows++
	}
	if len(s.Pairs) > 1 {
		fmt.Fprintf(t.w, "%-19s %-13s %-5s %7s %7s %15s %15s %11s\n", "", "", "total", num(r.Total.Ve, 1), num(r.Total.Ie, 1), "", "",
			t.cell(r.Total.PF, 3, "pf", "total", lv))
		t.rows++
	}
}

func (t *liveTable) transition(a alarm.Transition) {
	state := "CLEARED"
	if a.Raised {
		state = "RAISED "
	}
	if a.Metric == alarm.MetricEvent {
		e, what := a.Event, "after the event before the restart"
		switch {
		case e != nil && !a.Raised:
			what = "after " + e.ID
		case e != nil:
			ext := "residual"
			if e.Kind == events.Swell {
				ext = "maximum"
			}
			what = fmt.Sprintf("by %s (%.0f ms, %s %.1f %%)", e.ID, e.DurationS*1000, ext, e.ExtremePct)
		}
		fmt.Fprintf(t.w, ">> %s %-13s %s %s at %s\n", state, a.Rule, a.Metric, what, a.Time.UTC().Format("15:04:05"))
		t.rows++
		return
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

// demoFilterProfile makes the simulated reactor wear and recover over
// 20 simulated minutes (40 s at the demo's 30× speed), at worst losing 30 %
// of its filtering, so the distortion and PF alarms raise and clear
// within the one-minute demo.
func demoFilterProfile() sim.FilterProfile {
	return sim.FilterProfile{Period: 20 * time.Minute, Worst: 0.3}
}

// printDemoIntro prints the demo's opening lines: the invented site, the
// pace, the safety caution and the config in use.
func printDemoIntro(stdout io.Writer, cfg *config.Config, speed float64) {
	pace := fmt.Sprintf("simulated at %g× real time", speed)
	if speed == 0 {
		pace = "simulated as fast as this machine allows"
	}
	fmt.Fprintln(stdout, "gridloupe demo: North Weir pumping station, cabinet DC-2 (invented site),", pace)
	fmt.Fprintln(stdout, "CAUTION: a demo on simulated data. On a real cabinet, installation is work for qualified personnel under local")
	fmt.Fprintln(stdout, "electrical codes, with rated sensors (CAT III or better); never open-circuit a loaded CT secondary; gridloupe is")
	fmt.Fprintln(stdout, "not a protective device.")
	fmt.Fprintln(stdout)
	fmt.Fprintf(stdout, "config: %s (site, channels and the alarm rules below)\n", cfg.Path)
}

// demoCounts are the alarm transitions and voltage events a demo saw.
type demoCounts struct{ raised, cleared, events int }

// printDemoSummary prints what the demo measured, stored and published
// (d is nil when the daemon stopped before it was ready) and the commands
// to look back and clean up.
func printDemoSummary(stdout io.Writer, n demoCounts, d *daemon, wall time.Duration, cfgPath, dbPath, dir string, created bool) {
	fmt.Fprintln(stdout)
	fmt.Fprintf(stdout, "summary after %.0f s of wall time:\n", wall.Seconds())
	if d != nil && d.gw != nil {
		st := d.gw.Stats()
		fmt.Fprintf(stdout, "  measured:  %d windows of 10 cycles (%.1f simulated minutes), %d aggregates (3 s, 10 min, 2 h)\n",
			st.Windows, float64(st.Windows)*0.2/60, st.Aggregates)
		fmt.Fprintf(stdout, "  stored:    %d records in %s\n", st.Stored, dbPath)
		fmt.Fprintf(stdout, "  alarms:    %d raised, %d cleared (thresholds from %s)\n", n.raised, n.cleared, cfgPath)
		fmt.Fprintf(stdout, "  events:    %d voltage events stored with their waveforms\n", n.events)
		if d.pub != nil {
			ps := d.pub.Stats()
			fmt.Fprintf(stdout, "  published: %d messages acknowledged by the broker (queued in the outbox: %d)\n", ps.Acked, st.Queued)
		}
	}
	self := selfCommand()
	fmt.Fprintf(stdout, "  look back: %s export --store %s --interval 10min --format table --config %s\n", self, dbPath, cfgPath)
	fmt.Fprintf(stdout, "             %s evaluate --config %s --store %s\n", self, cfgPath, dbPath)
	fmt.Fprintf(stdout, "             %s events --store %s\n", self, dbPath)
	if created {
		fmt.Fprintf(stdout, "  clean up:  rm -r %s\n", dir)
	} else {
		fmt.Fprintf(stdout, "  clean up:  rm %s\n", dbPath)
	}
}
