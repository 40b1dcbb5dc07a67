package main

import (
	"bufio"
	"errors"
	"flag"
	"fmt"
	"io"
	"math"
	"os"
	"path/filepath"
	"strings"
	"time"

	"github.com/gridloupe/gridloupe/config"
	"github.com/gridloupe/gridloupe/metrics"
	"github.com/gridloupe/gridloupe/metrics/compliance"
	"github.com/gridloupe/gridloupe/metrics/energy"
	"github.com/gridloupe/gridloupe/metrics/events"
	"github.com/gridloupe/gridloupe/metrics/harmdiag"
	"github.com/gridloupe/gridloupe/metrics/limits"
	"github.com/gridloupe/gridloupe/store"
	"github.com/gridloupe/gridloupe/stream/report"
)

const reportHelp = `Usage: gridloupe report --config FILE --store DB [--from T] -o FILE.html

Writes the weekly report of a stored week as one self-contained HTML file
(inline SVG charts, no script, no external assets; prints on A4): the
IEEE 519-2014 evaluation of 'gridloupe evaluate' with the margin of every
line, per-order voltage and current spectra of the statistic that counts
against the limits, the week's THD, TDD, power factor and frequency, the
energy and demand summary with IL and its basis, the direction of each
current harmonic's power, a reactor/filter ageing indicator (TDD at
comparable load over the weeks stored), the voltage events, and the safety
and point-of-common-coupling cautions.

The week is chosen as for evaluate (--from, else the last 7 whole UTC days).
The store is opened read-only: stop 'gridloupe run' first, or copy the
file and report on the copy. Exit status: 0 when the file is written, 2
for usage and config errors, 1 for store and file errors.

Flags:
`

func cmdReport(args []string, stdout io.Writer) error {
	fs := flag.NewFlagSet("report", flag.ContinueOnError)
	cfgPath := fs.String("config", "", "config `FILE` (YAML); required")
	dbPath := fs.String("store", "", "bbolt store `FILE` (default: the config's store.path)")
	fromStr := fs.String("from", "", "start of the week, RFC 3339 (default: the last 7 whole UTC days of stored values)")
	outPath := fs.String("o", "", "output `FILE.html`; required")
	timeout := fs.Duration("timeout", 2*time.Second, "how long to wait for the store's file lock")
	fs.Usage = func() {
		fmt.Fprint(fs.Output(), reportHelp)
		fs.PrintDefaults()
	}
	if err := parseFlags(fs, args, stdout); err != nil {
		return err
	}
	if *cfgPath == "" || *outPath == "" || fs.NArg() != 0 {
		return usagef("report: --config FILE and -o FILE.html are required; it takes no arguments")
	}
	cfg, db, path, from, err := openWeek("report", *cfgPath, *dbPath, *fromStr, *timeout)
	if err != nil {
		return err
	}
	defer db.Close()
	d, err := reportData(db, cfg, path, from, time.Now())
	if err != nil {
		return err
	}
	tmp := *outPath + ".tmp"
	f, err := os.Create(tmp)
	if err != nil {
		return fmt.Errorf("report: %w", err)
	}
	w := bufio.NewWriterSize(f, 64<<10)
	err = report.Write(w, d)
	if err == nil {
		err = w.Flush()
	}
	if cerr := f.Close(); err == nil {
		err = cerr
	}
	if err == nil {
		err = os.Rename(tmp, *outPath)
	}
	if err != nil {
		os.Remove(tmp)
		return fmt.Errorf("report: %s: %w", *outPath, err)
	}
	fmt.Fprintf(stdout, "report: wrote %s (week %s, verdict %s)\n", filepath.Clean(*outPath), d.Result.Start.Format(dayFmt), d.Result.Verdict)
	return nil
}

// pccCaution is printed in every report.
const pccCaution = "IEEE 519 limits apply at the point of common coupling with the utility. Measured inside a drive cabinet or on a branch, these figures are a reference for the engineer, not a compliance finding; diversity and cancellation between loads usually lower the distortion seen at the PCC."

// reportData gathers everything the report shows.
func reportData(db *store.DB, cfg *config.Config, path string, from, now time.Time) (*report.Data, error) {
	res, err := evaluateStore(db, cfg, from)
	if err != nil {
		return nil, err
	}
	setup, err := db.Layout()
	if err != nil {
		return nil, fmt.Errorf("report: %w", err)
	}
	d := &report.Data{Site: cfg.Site, Gateway: cfg.Gateway, Generated: now, Store: path, Cautions: evalCautions,
		PCC: pccCaution, Result: res,
		EventsNote: "no voltage dip, swell or interruption is stored for the week"}
	shown := evalShown(res.Lines, false)
	hidden := 0
	for i, l := range res.Lines {
		if shown[i] {
			d.Lines = append(d.Lines, l)
		} else {
			hidden++
		}
	}
	if hidden > 0 {
		d.HiddenNote = fmt.Sprintf("The table shows THD/TDD, every failed line and per channel and statistic the order closest to its threshold; %d more harmonic lines (none failed) are in the spectra below and in 'gridloupe evaluate --all'.", hidden)
	}
	d.Spectra, d.SpectraNote = reportSpectra(res)
	if err := db.Events(res.Start, res.End, func(e events.Record) error {
		d.Events = append(d.Events, report.Event{Kind: e.Kind.String(), Start: e.Start, DurationS: e.DurationS,
			ExtremePct: e.ExtremePct, Channels: strings.Join(e.Channels, " ")})
		return nil
	}); err != nil {
		return nil, fmt.Errorf("report: events: %w", err)
	}

	// One pass over the week's 10 min values: trends, week energy, directions.
	week := newWeekTrends(setup, res.Start, res.End, cfg)
	dirs := harmdiag.NewDirections(setup)
	var impWh, expWh float64
	if err := db.Query(metrics.Int10min, res.Start, res.End, func(r *metrics.Record) error {
		week.add(r)
		dirs.Add(r)
		var c energy.Counters
		c.Add(r.Total.P, r.Total.Q1, r.DurationS)
		impWh += c.ImportWh
		expWh += c.ExportWh
		return nil
	}); err != nil {
		return nil, fmt.Errorf("report: %w", err)
	}
	d.Trends = week.trends()
	d.Directions = dirs.Result()

	// Ageing over every stored week.
	first, err := firstStored(db)
	if err != nil {
		return nil, err
	}
	ilRef := cfg.ILA
	months, err := db.DemandMonths()
	if err != nil {
		return nil, fmt.Errorf("report: %w", err)
	}
	ms := make([]energy.Month, len(months))
	for i, m := range months {
		ms[i] = energy.Month{Month: m.Month, MaxA: m.MaxA, MaxW: m.MaxW, At: m.At}
	}
	est := energy.EstimateIL(ms, res.End, cfg.Demand.Interval)
	if ilRef <= 0 && !math.IsNaN(est.A) {
		ilRef = est.A
	}
	age := harmdiag.NewAgeing(setup, first.Truncate(24*time.Hour), ilRef)
	if err := db.Query(metrics.Int10min, time.Time{}, time.Time{}, func(r *metrics.Record) error { age.Add(r); return nil }); err != nil {
		return nil, fmt.Errorf("report: %w", err)
	}
	d.Ageing = age.Table()

	counters, err := db.Energy()
	if err != nil {
		return nil, fmt.Errorf("report: %w", err)
	}
	d.Energy, d.EnergyNote = energyRows(cfg, impWh, expWh, counters, months, est)
	return d, nil
}

func firstStored(db *store.DB) (time.Time, error) {
	var first time.Time
	errStop := errors.New("stop")
	err := db.Query(metrics.Int10min, time.Time{}, time.Time{}, func(r *metrics.Record) error {
		first = r.Start
		return errStop
	})
	if err != nil && !errors.Is(err, errStop) {
		return first, fmt.Errorf("report: %w", err)
	}
	return first, nil
}

// reportSpectra draws, per channel and order, the statistic that counts:
// the line with the largest value over threshold among the clause 5
// statistics, against that threshold.
func reportSpectra(res *compliance.Result) ([]report.Bars, string) {
	order := []string{}
	byCh := map[string]map[int]compliance.Line{}
	for _, l := range res.Lines {
		if l.Order == 0 {
			continue
		}
		m := byCh[l.Channel]
		if m == nil {
			m = map[int]compliance.Line{}
			byCh[l.Channel] = m
			order = append(order, l.Channel)
		}
		old, ok := m[l.Order]
		if !ok || ratio(l) > ratio(old) || (math.IsNaN(ratio(old)) && !math.IsNaN(ratio(l))) {
			m[l.Order] = l
		}
	}
	var out []report.Bars
	for _, ch := range order {
		m := byCh[ch]
		b := report.Bars{Unit: "%"}
		kind := ""
		for h := 2; h <= limits.MaxOrder; h++ {
			l, ok := m[h]
			if !ok {
				continue
			}
			kind = l.Basis
			b.Orders = append(b.Orders, h)
			b.Values = append(b.Values, l.Value)
			b.Limits = append(b.Limits, l.Threshold)
		}
		basis := "% of nominal voltage"
		if kind == compliance.BasisIL {
			basis = "% of IL"
		}
		b.Title = ch + " harmonics, " + basis
		out = append(out, b)
	}
	return out, "Each bar is the order's binding statistic (the one closest to its threshold among the daily 99th percentile of 3 s values and the weekly 99th/95th percentiles of 10 min values), drawn against that statistic's threshold (limit × multiplier)."
}

func ratio(l compliance.Line) float64 { return l.Value / l.Threshold }

// weekTrends collects the week's 10 min series.
type weekTrends struct {
	s              *metrics.Setup
	from, to       time.Time
	times          []time.Time
	thd, tdd       [][]float64
	vi, ii         []int
	pf, freq       []float64
	vLimit, tddLim float64
}

func newWeekTrends(s *metrics.Setup, from, to time.Time, cfg *config.Config) *weekTrends {
	w := &weekTrends{s: s, from: from, to: to}
	for i, c := range s.Channels {
		if c.Kind == metrics.Voltage {
			w.vi = append(w.vi, i)
		} else if c.Phase != 'n' && s.ILA > 0 {
			w.ii = append(w.ii, i)
		}
	}
	w.thd, w.tdd = make([][]float64, len(w.vi)), make([][]float64, len(w.ii))
	_, w.vLimit = limits.VoltageLimits(busVoltage(cfg))
	w.tddLim = math.NaN()
	if cfg.ILA > 0 {
		w.tddLim = limits.CurrentLimits(iscOverIL(cfg)).TDD
	}
	return w
}

func (w *weekTrends) add(r *metrics.Record) {
	w.times = append(w.times, r.Start)
	pick := func(c metrics.ChannelValues, h50, any float64) float64 {
		if !metrics.IsNull(h50) {
			return h50
		}
		return any
	}
	for k, i := range w.vi {
		c := r.Channels[i]
		w.thd[k] = append(w.thd[k], pick(c, c.THDH50Pct, c.THDPct))
	}
	for k, i := range w.ii {
		c := r.Channels[i]
		w.tdd[k] = append(w.tdd[k], pick(c, c.TDDH50Pct, c.TDDPct))
	}
	w.pf = append(w.pf, r.Total.PF)
	w.freq = append(w.freq, r.FreqHz)
}

func (w *weekTrends) trends() []report.Trend {
	mk := func(title, unit string, limit float64, names []string, vals [][]float64) report.Trend {
		t := report.Trend{Title: title, Unit: unit, Limit: limit, From: w.from, To: w.to}
		for i, n := range names {
			t.Series = append(t.Series, report.Series{Name: n, Times: w.times, Values: vals[i]})
		}
		return t
	}
	names := func(idx []int) []string {
		var n []string
		for _, i := range idx {
			n = append(n, w.s.Channels[i].Name)
		}
		return n
	}
	out := []report.Trend{mk("Voltage THD (10 min)", "%", w.vLimit, names(w.vi), w.thd)}
	if len(w.ii) > 0 {
		out = append(out, mk("Current TDD (10 min)", "% of IL", w.tddLim, names(w.ii), w.tdd))
	}
	if len(w.s.Pairs) > 0 {
		out = append(out, mk("Total power factor (10 min)", "P/Se", math.NaN(), []string{"pf"}, [][]float64{w.pf}))
	}
	out = append(out, mk("Frequency (10 min mean)", "Hz", math.NaN(), []string{"freq_hz"}, [][]float64{w.freq}))
	return out
}

// energyRows is the energy and demand summary.
func energyRows(cfg *config.Config, impWh, expWh float64, counters []store.Energy, months []store.DemandMonth, est energy.IL) ([]report.KV, string) {
	rows := []report.KV{
		kv("Active energy this week, import (from the 10 min values)", fmt.Sprintf("%.1f kWh", impWh/1000)),
		kv("Active energy this week, export", fmt.Sprintf("%.1f kWh", expWh/1000)),
	}
	for _, c := range counters {
		rows = append(rows, kv("Register "+c.Circuit+" now: import / export",
			fmt.Sprintf("%.1f / %.1f kWh", c.ImportWh/1000, c.ExportWh/1000)))
		rows = append(rows, kv("Register "+c.Circuit+" now: fundamental kvarh Q1 / Q2 / Q3 / Q4",
			fmt.Sprintf("%.1f / %.1f / %.1f / %.1f", c.VarhQ[0]/1000, c.VarhQ[1]/1000, c.VarhQ[2]/1000, c.VarhQ[3]/1000)))
	}
	for _, m := range months {
		rows = append(rows, kv("Maximum "+cfg.Demand.Interval.String()+" demand, "+m.Month+" (phases a / b / c, total P)",
			fmt.Sprintf("%s / %s / %s A, %.1f kW", amp(m.MaxA[0]), amp(m.MaxA[1]), amp(m.MaxA[2]), m.MaxW/1000)))
	}
	il := "not set and not estimated"
	basis := est.Basis
	switch {
	case cfg.ILA > 0:
		il = fmt.Sprintf("%.0f A (il_a from the config)", cfg.ILA)
		if !math.IsNaN(est.A) {
			basis = fmt.Sprintf("The stored monthly maxima would give %.1f A (%s).", est.A, est.Basis)
		}
	case !math.IsNaN(est.A):
		il = fmt.Sprintf("%.1f A (estimated)", est.A)
	}
	rows = append(rows, kv("IL, maximum demand load current", il))
	note := "Week energy integrates the stored 10 min mean P (an interval that both drew and fed back power nets out); the registers integrate every 10/12-cycle window. " + basis
	if len(counters) == 0 {
		note += " No energy registers are stored yet (they are written by 'gridloupe run')."
	}
	return rows, note
}

func amp(v float64) string {
	if math.IsNaN(v) {
		return "–"
	}
	return fmt.Sprintf("%.1f", v)
}

func kv(label, value string) report.KV { return report.KV{Label: label, Value: value} }
