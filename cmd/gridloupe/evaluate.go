package main

import (
	"bufio"
	"encoding/json"
	"errors"
	"flag"
	"fmt"
	"io"
	"math"
	"time"

	"github.com/gridloupe/gridloupe/config"
	"github.com/gridloupe/gridloupe/metrics"
	"github.com/gridloupe/gridloupe/metrics/compliance"
	"github.com/gridloupe/gridloupe/store"
)

const evaluateHelp = `Usage: gridloupe evaluate --config FILE [--store DB] [flags]

Evaluates one week (7 × 24 h, UTC) of stored 3 s and 10 min values against
the harmonic limits of IEEE 519-2014 clause 5 and prints a report: for each
voltage channel THD and harmonics 2..50 (daily 99th percentile of the 3 s
values below 1.5 × Table 1, weekly 95th percentile of the 10 min values
below 1.0 × Table 1), for each phase current (with il_a set) TDD and
harmonics 3..50 (daily p99 of 3 s below 2.0 ×, weekly p99 of 10 min below
1.5 ×, weekly p95 of 10 min below 1.0 × Table 2, row chosen by isc_a/il_a).
Values flagged event, no_lock or partial are excluded. Coverage is the
share of a period's time that whole values cover (never above 100 %); a day
or week with less than 90 % is incomplete, never passed; one without any
record shows "no data".

The week starts at --from, by default 7 days before the midnight (UTC) at
or before the end of the newest stored value: the last 7 whole days. When
those hold no data (a store younger than its first midnight), the week ends
at the midnight after the newest value instead, so the days that hold data
are shown (incomplete). The store is opened read-only: stop a running
'gridloupe run' first, or copy the file and evaluate the copy.

The table shows every thd_h50 and tdd_h50 line, every failed line, and for
each channel and statistic the one harmonic order whose value is closest to
its threshold (the largest value/threshold; none when no order has a
value); --all shows every line.

Exit status: 0 when the report is printed, whatever the verdict; 2 for
usage and config errors; 1 for store errors.

Flags:
`

// evalHeld is the advice printed when the daemon holds the store.
const evalHeld = "stop the daemon (gridloupe run) first, or copy the file (e.g. cp) and evaluate the copy"

func cmdEvaluate(args []string, stdout, stderr io.Writer) error {
	fs := flag.NewFlagSet("evaluate", flag.ContinueOnError)
	cfgPath := fs.String("config", "", "config `FILE` (YAML) with nominal voltage, wiring, il_a and isc_a; required")
	dbPath := fs.String("store", "", "bbolt store `FILE` (default: the config's store.path)")
	fromStr := fs.String("from", "", "start of the week, RFC 3339 (default: the last 7 whole UTC days of stored 10 min values)")
	format := fs.String("format", "table", "output format: table (for people) or jsonl (every line, unrounded)")
	all := fs.Bool("all", false, "table: print every line, not only THD/TDD, failures and per channel and statistic the order closest to its threshold")
	timeout := fs.Duration("timeout", 2*time.Second, "how long to wait for the store's file lock")
	fs.Usage = func() {
		fmt.Fprint(fs.Output(), evaluateHelp)
		fs.PrintDefaults()
	}
	if err := parseFlags(fs, args, stdout); err != nil {
		return err
	}
	if *cfgPath == "" || fs.NArg() != 0 {
		return usagef("evaluate: --config FILE is required and takes no arguments")
	}
	if *format != "table" && *format != "jsonl" {
		return usagef("evaluate: --format %q: allowed are table, jsonl", *format)
	}
	cfg, db, path, from, err := openWeek("evaluate", *cfgPath, *dbPath, *fromStr, *timeout)
	if err != nil {
		return err
	}
	defer db.Close()
	res, err := evaluateStore(db, cfg, from)
	if err != nil {
		return err
	}
	out := bufio.NewWriterSize(stdout, 64<<10)
	if *format == "jsonl" {
		err = writeEvalJSONL(out, cfg, path, res)
	} else {
		writeEvalTable(out, cfg, path, res, *all)
	}
	if ferr := out.Flush(); err == nil {
		err = ferr
	}
	return err
}

// evaluateStore runs the evaluation over the store's week from from (zero:
// the default week).
func evaluateStore(db *store.DB, cfg *config.Config, from time.Time) (*compliance.Result, error) {
	setup, err := db.Layout()
	if errors.Is(err, store.ErrNoLayout) {
		return nil, fmt.Errorf("evaluate: the store holds no records yet: %w", err)
	}
	if err != nil {
		return nil, fmt.Errorf("evaluate: %w", err)
	}
	if from.IsZero() {
		if from, err = defaultWeek(db); err != nil {
			return nil, err
		}
	}
	busV := cfg.BusVoltageV()
	ev, err := compliance.New(compliance.Config{
		Setup: setup, NominalV: cfg.Nominal.VoltageV, BusV: busV,
		IL: cfg.ILA, Isc: cfg.IscA, Start: from,
	})
	if err != nil {
		return nil, &usageError{Err: fmt.Errorf("evaluate: %s: %w", cfg.Path, err)}
	}
	end := from.Add(compliance.Days * 24 * time.Hour)
	for _, iv := range []metrics.Interval{metrics.Int3s, metrics.Int10min} {
		if err := db.Query(iv, from, end, ev.Add); err != nil {
			return nil, fmt.Errorf("evaluate: %s values: %w", iv, err)
		}
	}
	return ev.Result(), nil
}

// defaultWeekStart returns the start of the last 7 whole UTC days that end
// at or before newestEnd, the end of the newest stored value.
func defaultWeekStart(newestEnd time.Time) time.Time {
	end := newestEnd.UTC().Truncate(24 * time.Hour)
	return end.Add(-compliance.Days * 24 * time.Hour)
}

// errFound stops a Query at its first record.
var errFound = errors.New("found")

// defaultWeek picks the default week: the last 7 whole days before the
// newest stored 3 s or 10 min value's end, or, when those hold no value,
// the 7 days ending at the midnight after it.
func defaultWeek(db *store.DB) (time.Time, error) {
	var newest time.Time
	for _, iv := range []metrics.Interval{metrics.Int3s, metrics.Int10min} {
		last, err := db.Last(iv, 1)
		if err != nil {
			return time.Time{}, fmt.Errorf("evaluate: %w", err)
		}
		if len(last) > 0 {
			if end := last[0].Start.Add(time.Duration(last[0].DurationS * float64(time.Second))); end.After(newest) {
				newest = end
			}
		}
	}
	if newest.IsZero() {
		return time.Time{}, errors.New("evaluate: the store holds no 3 s or 10 min values; give --from to evaluate a week anyway")
	}
	from := defaultWeekStart(newest)
	to := from.Add(compliance.Days * 24 * time.Hour)
	for _, iv := range []metrics.Interval{metrics.Int3s, metrics.Int10min} {
		err := db.Query(iv, from, to, func(*metrics.Record) error { return errFound })
		if errors.Is(err, errFound) {
			return from, nil
		}
		if err != nil {
			return time.Time{}, fmt.Errorf("evaluate: %s values: %w", iv, err)
		}
	}
	return from.Add(24 * time.Hour), nil
}

// evalCautions open every human-readable evaluation report.
var evalCautions = []string{
	"Connecting sensors to live conductors can kill: installation and removal are work for qualified personnel only.",
	"Use rated voltage sensors and CTs of the right measurement category (CAT III or better in a drive cabinet).",
	"Never open-circuit the secondary of a loaded CT: short it first.",
	"gridloupe is a monitor, not a protective device.",
	"Follow local electrical codes and site rules.",
}

const dayFmt = "2006-01-02"

func pctStr(v float64) string {
	if math.IsNaN(v) {
		return "-"
	}
	return fmt.Sprintf("%.2f", v)
}

func writeEvalTable(w io.Writer, cfg *config.Config, path string, res *compliance.Result, all bool) {
	fmt.Fprintf(w, "WEEKLY HARMONIC EVALUATION  %s\n", cfg.Site)
	fmt.Fprintf(w, "week %s to %s (UTC), store %s\n\n", res.Start.Format(time.RFC3339), res.End.Format(time.RFC3339), path)
	fmt.Fprintln(w, "SAFETY")
	for _, c := range evalCautions {
		fmt.Fprintf(w, "  * %s\n", c)
	}
	fmt.Fprintf(w, "\n%s\n\n", res.Notes[0])

	fmt.Fprintln(w, "BASIS")
	fmt.Fprintf(w, "  standard   %s, clause 5 statistics\n", res.Edition)
	fmt.Fprintf(w, "  voltage    bus %.0f V (%s, %g V nominal): Table 1 %.1f %% individual, %.1f %% THD\n",
		res.BusV, cfg.Wiring, res.NominalV, res.VIndivLimit, res.VTHDLimit)
	if res.IL > 0 {
		ratio := "unknown (isc_a not set)"
		if !math.IsNaN(res.Ratio) {
			ratio = fmt.Sprintf("%g A / %g A = %.1f", res.Isc, res.IL, res.Ratio)
		}
		fmt.Fprintf(w, "  current    ISC/IL %s: Table 2 row %s, TDD %.1f %%\n", ratio, res.Row, res.TDDLimit)
	} else {
		fmt.Fprintln(w, "  current    not evaluated (il_a not set)")
	}
	fmt.Fprintln(w, "  bases      voltage THD: % of fundamental; voltage harmonics: % of nominal voltage; TDD and current harmonics: % of IL")

	fmt.Fprintf(w, "\nCOVERAGE  (share of the period's time covered by whole values used; a day or the week needs %.0f %%)\n", 100*res.MinCoverage)
	fmt.Fprintf(w, "  %-12s %8s %7s %8s %8s %9s  %s\n", "period", "used", "event", "no_lock", "partial", "coverage", "state")
	state := func(complete, overfull bool) string {
		switch {
		case overfull:
			return "incomplete (overlapping records)"
		case complete:
			return "complete"
		}
		return "incomplete"
	}
	period := func(name string, noData bool, used, event, noLock, partial int, cov float64, complete, overfull bool) {
		if noData {
			fmt.Fprintf(w, "  %-12s %8s %7s %8s %8s %9s  %s\n", name, "-", "-", "-", "-", "no data", "incomplete")
			return
		}
		fmt.Fprintf(w, "  %-12s %8d %7d %8d %8d %8.1f%%  %s\n", name, used, event, noLock, partial, 100*cov, state(complete, overfull))
	}
	for _, d := range res.Days {
		period(d.Start.Format(dayFmt)+" 3s", d.NoData(), d.Used, d.Event, d.NoLock, d.Partial, d.Coverage, d.Complete, d.Overfull)
	}
	wk := res.Week
	period("week 10min", wk.NoData(), wk.Used, wk.Event, wk.NoLock, wk.Partial, wk.Coverage, wk.Complete, wk.Overfull)

	fmt.Fprintln(w, "\nRESULTS  (percent; each value must stay below limit × multiplier)")
	fmt.Fprintf(w, "  %-8s %-8s %-17s %8s %7s %5s %9s  %-10s %-10s %8s %s\n",
		"channel", "quantity", "statistic", "value", "limit", "mult", "threshold", "worst day", "verdict", "coverage", "days")
	shown := evalShown(res.Lines, all)
	for i, l := range res.Lines {
		if !shown[i] {
			continue
		}
		day := ""
		if l.WorstDay >= 0 {
			day = res.Days[l.WorstDay].Start.Format(dayFmt)
		}
		val, cov, days := pctStr(l.Value), fmt.Sprintf("%7.1f%%", 100*l.Coverage), ""
		if l.Values == 0 {
			val, cov = "no data", "no data"
		}
		if l.Statistic == compliance.DailyP99 {
			// the days a daily verdict rests on
			days = fmt.Sprintf("%d/%d", l.DaysJudged, compliance.Days)
		}
		fmt.Fprintf(w, "  %-8s %-8s %-17s %8s %7.3g %5.1f %9.3g  %-10s %-10s %8s %s\n",
			l.Channel, l.Quantity, l.Statistic, val, l.Limit, l.Multiplier, l.Threshold,
			day, l.Verdict, cov, days)
	}
	var hidPass, hidInc int
	for i, l := range res.Lines {
		switch {
		case shown[i]:
		case l.Verdict == compliance.Pass:
			hidPass++
		default:
			hidInc++
		}
	}
	if hidPass+hidInc > 0 {
		fmt.Fprintf(w, "  (%d more harmonic lines not shown: %d pass, %d incomplete, none failed; --all or --format jsonl lists them)\n",
			hidPass+hidInc, hidPass, hidInc)
	}
	pass, fail, inc := res.Counts()

	fmt.Fprintln(w, "\nNOTES")
	for _, n := range res.Notes[1:] {
		fmt.Fprintf(w, "  * %s\n", n)
	}
	fmt.Fprintf(w, "\nVERDICT  %s  (%d lines: %d pass, %d fail, %d incomplete)\n",
		verdictWord(res.Verdict), len(res.Lines), pass, fail, inc)
}

func verdictWord(v compliance.Verdict) string {
	switch v {
	case compliance.Pass:
		return "PASS: every statistic below its threshold"
	case compliance.Fail:
		return "FAIL: at least one statistic at or above its threshold"
	}
	return "INCOMPLETE: too little data to pass"
}

// evalShown picks the lines the table prints: all of them with all; else
// every thd_h50/tdd_h50 line, every failed line, and per channel and
// statistic the harmonic line with a value closest to its threshold (the
// largest value/threshold; evaluateHelp says so).
func evalShown(lines []compliance.Line, all bool) []bool {
	shown := make([]bool, len(lines))
	type key struct {
		ch string
		st compliance.Statistic
	}
	best := map[key]int{}
	for i, l := range lines {
		switch {
		case all, l.Order == 0, l.Verdict == compliance.Fail:
			shown[i] = true
			continue
		}
		if math.IsNaN(l.Value) {
			continue // no value: nothing to be close to its threshold
		}
		k := key{l.Channel, l.Statistic}
		if j, ok := best[k]; !ok || lines[j].Value/lines[j].Threshold < l.Value/l.Threshold {
			best[k] = i
		}
	}
	for _, i := range best {
		shown[i] = true
	}
	return shown
}

// jsonNum is a float64 that encodes NaN as null.
type jsonNum float64

func (n jsonNum) MarshalJSON() ([]byte, error) {
	if math.IsNaN(float64(n)) || math.IsInf(float64(n), 0) {
		return []byte("null"), nil
	}
	return json.Marshal(float64(n))
}

func writeEvalJSONL(w io.Writer, cfg *config.Config, path string, res *compliance.Result) error {
	enc := json.NewEncoder(w)
	if err := enc.Encode(evalHeader(cfg, path, res)); err != nil {
		return fmt.Errorf("evaluate: %w", err)
	}
	for _, d := range res.Days {
		p := evalPeriodJSON{"day_3s", d.Start.Format(time.RFC3339), d.Expected, d.Records, d.Event, d.NoLock, d.Partial, d.Used, d.Covered, d.Coverage, d.NoData(), d.Overfull, d.Complete}
		if err := enc.Encode(p); err != nil {
			return fmt.Errorf("evaluate: %w", err)
		}
	}
	wk := res.Week
	if err := enc.Encode(evalPeriodJSON{"week_10min", res.Start.Format(time.RFC3339), wk.Expected, wk.Records, wk.Event, wk.NoLock, wk.Partial, wk.Used, wk.Covered, wk.Coverage, wk.NoData(), wk.Overfull, wk.Complete}); err != nil {
		return fmt.Errorf("evaluate: %w", err)
	}
	for _, l := range res.Lines {
		if err := enc.Encode(evalLine(l, res)); err != nil {
			return fmt.Errorf("evaluate: %w", err)
		}
	}
	pass, fail, inc := res.Counts()
	v := struct {
		Type       string `json:"type"`
		Verdict    string `json:"verdict"`
		Pass       int    `json:"pass"`
		Fail       int    `json:"fail"`
		Incomplete int    `json:"incomplete"`
	}{"verdict", res.Verdict.String(), pass, fail, inc}
	if err := enc.Encode(v); err != nil {
		return fmt.Errorf("evaluate: %w", err)
	}
	return nil
}

// evalHeaderJSON is the first JSONL line of evaluate: the site, the
// span, the limits that apply and the cautions.
type evalHeaderJSON struct {
	Type        string   `json:"type"`
	Site        string   `json:"site"`
	Store       string   `json:"store"`
	Edition     string   `json:"edition"`
	Start       string   `json:"start"`
	End         string   `json:"end"`
	NominalV    float64  `json:"nominal_v"`
	BusV        float64  `json:"bus_v"`
	T1IndivPct  float64  `json:"table1_individual_pct"`
	T1THDPct    float64  `json:"table1_thd_pct"`
	ILA         float64  `json:"il_a"`
	IscA        float64  `json:"isc_a"`
	Ratio       jsonNum  `json:"isc_il"`
	Row         string   `json:"table2_row,omitempty"`
	TDDPct      float64  `json:"table2_tdd_pct,omitempty"`
	MinCoverage float64  `json:"min_coverage"`
	Safety      []string `json:"safety"`
	Notes       []string `json:"notes"`
}

// evalPeriodJSON is one JSONL coverage line: a day of 3 s values or the
// week of 10 min values.
type evalPeriodJSON struct {
	Type     string  `json:"type"`
	Start    string  `json:"start"`
	Expected int     `json:"expected"`
	Records  int     `json:"records"`
	Event    int     `json:"event"`
	NoLock   int     `json:"no_lock"`
	Partial  int     `json:"partial"`
	Used     int     `json:"used"`
	Covered  float64 `json:"covered_s"`
	Coverage float64 `json:"coverage"`
	NoData   bool    `json:"no_data"`
	Overfull bool    `json:"overfull"`
	Complete bool    `json:"complete"`
}

// evalLineJSON is one JSONL judgement line: a quantity on a channel
// against its limit.
type evalLineJSON struct {
	Type       string    `json:"type"`
	Channel    string    `json:"channel"`
	Kind       string    `json:"kind"`
	Quantity   string    `json:"quantity"`
	Order      int       `json:"h,omitempty"`
	Basis      string    `json:"basis"`
	Statistic  string    `json:"statistic"`
	Value      jsonNum   `json:"value_pct"`
	WorstDay   *string   `json:"worst_day,omitempty"`
	Daily      []jsonNum `json:"daily_pct,omitempty"`
	Limit      float64   `json:"limit_pct"`
	Multiplier float64   `json:"multiplier"`
	Threshold  float64   `json:"threshold_pct"`
	Coverage   float64   `json:"coverage"`
	DaysJudged *int      `json:"days_judged,omitempty"`
	Values     int       `json:"values"`
	Nulls      int       `json:"nulls"`
	Verdict    string    `json:"verdict"`
}

// evalHeader is the header line for res; the Table 2 row and TDD limit
// only when a load current is known.
func evalHeader(cfg *config.Config, path string, res *compliance.Result) evalHeaderJSON {
	h := evalHeaderJSON{Type: "evaluation", Site: cfg.Site, Store: path, Edition: res.Edition,
		Start: res.Start.Format(time.RFC3339), End: res.End.Format(time.RFC3339),
		NominalV: res.NominalV, BusV: res.BusV, T1IndivPct: res.VIndivLimit, T1THDPct: res.VTHDLimit,
		ILA: res.IL, IscA: res.Isc, Ratio: jsonNum(res.Ratio), MinCoverage: res.MinCoverage,
		Safety: evalCautions, Notes: res.Notes}
	if res.IL > 0 {
		h.Row, h.TDDPct = res.Row, res.TDDLimit
	}
	return h
}

// evalLine is the JSONL line for l; a daily 99th percentile also carries
// its worst day, the days judged and each day's value.
func evalLine(l compliance.Line, res *compliance.Result) evalLineJSON {
	o := evalLineJSON{Type: "line", Channel: l.Channel, Kind: l.Kind.String(), Quantity: l.Quantity, Order: l.Order,
		Basis: l.Basis, Statistic: l.Statistic.String(), Value: jsonNum(l.Value), Limit: l.Limit,
		Multiplier: l.Multiplier, Threshold: l.Threshold, Coverage: l.Coverage, Values: l.Values,
		Nulls: l.Nulls, Verdict: l.Verdict.String()}
	if l.Statistic == compliance.DailyP99 {
		o.DaysJudged = &l.DaysJudged
		if l.WorstDay >= 0 {
			s := res.Days[l.WorstDay].Start.Format(dayFmt)
			o.WorstDay = &s
		}
		o.Daily = make([]jsonNum, len(l.Daily))
		for i, v := range l.Daily {
			o.Daily[i] = jsonNum(v)
		}
	}
	return o
}
