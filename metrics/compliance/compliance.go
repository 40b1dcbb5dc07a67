package compliance

import (
	"fmt"
	"math"
	"time"

	"github.com/gridloupe/gridloupe/metrics"
	"github.com/gridloupe/gridloupe/metrics/limits"
)

// Period lengths and expected value counts.
const (
	Day3sValues     = 24 * 60 * 60 / 3    // 3 s values in a day: 28,800
	Week10minValues = Days * 24 * 60 / 10 // 10 min values in a week: 1,008
	dayLength       = 24 * time.Hour
)

// DefaultMinCoverage is the fraction of its expected values a day (3 s) or
// the week (10 min) needs to be judged: our choice (common practice, no
// source); IEEE 519 does not fix one.
const DefaultMinCoverage = 0.90

// overfill sizes the percentile tails: they stay exact up to this many
// times the expected count of values (more arrive only when records
// overlap, for example after a clock step).
const overfill = 2

// Clause 5 multipliers of the table limits.
const (
	multV3s     = 1.5 // voltage, daily p99 of 3 s values: 519-2014 5.1 [confirmed]
	multV10min  = 1.0 // voltage, weekly p95 of 10 min values: 519-2014 5.1 [confirmed]
	multI3s     = 2.0 // current, daily p99 of 3 s values: 519-2014 5.2 [from memory, unconfirmed]
	multI10p99  = 1.5 // current, weekly p99 of 10 min values: 519-2014 5.2 [from memory, unconfirmed]
	multI10p95  = 1.0 // current, weekly p95 of 10 min values: 519-2014 5.2 [from memory, unconfirmed]
	maxTDDOrder = limits.MaxOrder
)

// Config describes what to evaluate.
type Config struct {
	Setup       *metrics.Setup // the records' layout; required
	NominalV    float64        // V, phase-to-neutral nominal voltage: the base of voltage individual harmonics; > 0
	BusV        float64        // V, bus voltage at the PCC (line-to-line; V for single-phase): selects the Table 1 row; > 0
	IL          float64        // A, maximum demand load current: the base of TDD and current harmonics; 0 = currents not evaluated
	Isc         float64        // A, short-circuit current at the PCC: selects the Table 2 row; 0 = unknown, the strictest row
	Start       time.Time      // first instant of the 7 × 24 h evaluated
	MinCoverage float64        // fraction of expected values a day or the week needs; 0 = DefaultMinCoverage
}

// quantity is one evaluated quantity of one channel.
type quantity struct {
	ch, hIdx int // channel index; index in Setup.Orders, −1 for thd_h50 / tdd_h50
	order    int
	kind     metrics.Kind
	name     string
	basis    string
	limit    float64 // table limit, %
	day      tail    // the day in progress, 3 s values
	week     tail    // the week's 10 min values
	daily    [Days]float64
	dayN     [Days]int64
	nulls    int
}

// Evaluator accumulates one week of records. Feed it with Add (3 s records
// in ascending start order, 10 min records in any order), then call Result.
// Memory is bounded: per quantity it keeps the largest 1 % of a day's
// possible 3 s values and the largest 5 % of the week's 10 min values (see
// tail), a few kilobytes. An Evaluator is not safe for concurrent use.
type Evaluator struct {
	cfg     Config
	s       *metrics.Setup
	end     time.Time
	rowI    limits.CurrentRow
	vInd    float64
	vTHD    float64
	ratio   float64
	qs      []quantity
	days    [Days]Day
	week    Week
	cur     int // day in progress
	outside int
	res     *Result
}

// New validates cfg and builds the evaluator's quantities: for every
// voltage channel, thd_h50 (when all orders are computed) and each
// computed order 2..50; for every phase current channel when IL is set,
// tdd_h50 (when all orders are computed) and each computed order that
// Table 2 limits (3..50).
func New(cfg Config) (*Evaluator, error) {
	switch {
	case cfg.Setup == nil:
		return nil, fmt.Errorf("no setup: %w", ErrConfig)
	case !(cfg.NominalV > 0) || math.IsInf(cfg.NominalV, 0):
		return nil, fmt.Errorf("nominal voltage %v V: %w", cfg.NominalV, ErrConfig)
	case !(cfg.BusV > 0) || math.IsInf(cfg.BusV, 0):
		return nil, fmt.Errorf("bus voltage %v V: %w", cfg.BusV, ErrConfig)
	case !(cfg.IL >= 0) || math.IsInf(cfg.IL, 0):
		return nil, fmt.Errorf("IL %v A: %w", cfg.IL, ErrConfig)
	case !(cfg.Isc >= 0) || math.IsInf(cfg.Isc, 0):
		return nil, fmt.Errorf("ISC %v A: %w", cfg.Isc, ErrConfig)
	case cfg.Start.IsZero():
		return nil, fmt.Errorf("no start time: %w", ErrConfig)
	case cfg.MinCoverage == 0:
		cfg.MinCoverage = DefaultMinCoverage
	case !(cfg.MinCoverage > 0 && cfg.MinCoverage <= 1):
		return nil, fmt.Errorf("coverage threshold %v: must be in (0, 1]: %w", cfg.MinCoverage, ErrConfig)
	}
	e := &Evaluator{cfg: cfg, s: cfg.Setup, end: cfg.Start.Add(Days * dayLength), ratio: math.NaN()}
	e.vInd, e.vTHD = limits.VoltageLimits(cfg.BusV)
	if cfg.IL > 0 && cfg.Isc > 0 {
		e.ratio = cfg.Isc / cfg.IL
	}
	e.rowI = limits.CurrentLimits(e.ratio) // NaN selects the strictest row
	dayCap := tailCap(overfill*Day3sValues, 99)
	weekCap := tailCap(overfill*Week10minValues, 95)
	add := func(q quantity) {
		q.day, q.week = newTail(dayCap), newTail(weekCap)
		for d := range q.daily {
			q.daily[d] = math.NaN()
		}
		e.qs = append(e.qs, q)
	}
	for i, c := range e.s.Channels {
		switch {
		case c.Kind == metrics.Voltage:
			if e.s.AllOrders {
				add(quantity{ch: i, hIdx: -1, kind: c.Kind, name: "thd_h50", basis: BasisFundamental, limit: e.vTHD})
			}
			for j, h := range e.s.Orders {
				if h >= 2 && h <= limits.MaxOrder {
					add(quantity{ch: i, hIdx: j, order: h, kind: c.Kind, name: fmt.Sprintf("h%d", h), basis: BasisNominal, limit: e.vInd})
				}
			}
		case c.Kind == metrics.Current && c.Phase != 'n' && cfg.IL > 0:
			if e.s.AllOrders {
				add(quantity{ch: i, hIdx: -1, kind: c.Kind, name: "tdd_h50", basis: BasisIL, limit: e.rowI.TDD})
			}
			for j, h := range e.s.Orders {
				if lim := limits.IndividualCurrentLimit(e.rowI, h); lim > 0 {
					add(quantity{ch: i, hIdx: j, order: h, kind: c.Kind, name: fmt.Sprintf("h%d", h), basis: BasisIL, limit: lim})
				}
			}
		}
	}
	for d := range e.days {
		e.days[d] = Day{Start: cfg.Start.Add(time.Duration(d) * dayLength), Expected: Day3sValues}
	}
	e.week.Expected = Week10minValues
	return e, nil
}

// Add feeds one record. Records of other intervals or starting outside the
// week are counted and ignored. Records flagged event or no_lock are
// excluded and counted (the IEC 61000-4-30 flagging concept); null values
// are skipped and counted per quantity. Add does not allocate.
func (e *Evaluator) Add(r *metrics.Record) error {
	if e.res != nil {
		return ErrFinished
	}
	if r == nil {
		return fmt.Errorf("nil record: %w", ErrShape)
	}
	if r.Interval != metrics.Int3s && r.Interval != metrics.Int10min {
		e.outside++
		return nil
	}
	off := r.Start.Sub(e.cfg.Start)
	if off < 0 || !r.Start.Before(e.end) {
		e.outside++
		return nil
	}
	if err := e.checkShape(r); err != nil {
		return err
	}
	if r.Interval == metrics.Int10min {
		e.week.Records++
		if e.excluded(r, &e.week.Event, &e.week.NoLock, &e.week.Partial) {
			return nil
		}
		e.week.Used++
		e.week.Covered += covered(r, 600)
		for i := range e.qs {
			q := &e.qs[i]
			if v := e.value(q, r); metrics.IsNull(v) {
				q.nulls++
			} else {
				q.week.push(float32(v))
			}
		}
		return nil
	}
	d := int(off / dayLength)
	if d < e.cur {
		return fmt.Errorf("3 s record at %s after day %d was closed: %w",
			r.Start.UTC().Format(time.RFC3339), e.cur+1, ErrOrder)
	}
	e.closeDays(d)
	day := &e.days[d]
	day.Records++
	if e.excluded(r, &day.Event, &day.NoLock, &day.Partial) {
		return nil
	}
	day.Used++
	day.Covered += covered(r, 3)
	for i := range e.qs {
		q := &e.qs[i]
		if v := e.value(q, r); metrics.IsNull(v) {
			q.nulls++
		} else {
			q.day.push(float32(v))
		}
	}
	return nil
}

func (e *Evaluator) checkShape(r *metrics.Record) error {
	if len(r.Channels) != len(e.s.Channels) {
		return fmt.Errorf("record at %s has %d channels, setup %d: %w",
			r.Start.UTC().Format(time.RFC3339), len(r.Channels), len(e.s.Channels), ErrShape)
	}
	for i := range r.Channels {
		if len(r.Channels[i].H) != len(e.s.Orders) {
			return fmt.Errorf("record at %s, channel %q: %d orders, setup %d: %w",
				r.Start.UTC().Format(time.RFC3339), e.s.Channels[i].Name, len(r.Channels[i].H), len(e.s.Orders), ErrShape)
		}
	}
	return nil
}

// excluded counts and reports a record flagged event (first), no_lock or
// partial: only whole values count, so coverage counts the values that can
// exist (DESIGN "Time": a 3 s block a 10-minute tick cuts short is partial).
func (e *Evaluator) excluded(r *metrics.Record, event, noLock, partial *int) bool {
	switch {
	case r.Flags&metrics.FlagEvent != 0:
		*event++
	case r.Flags&metrics.FlagNoLock != 0:
		*noLock++
	case r.Flags&metrics.FlagPartial != 0:
		*partial++
	default:
		return false
	}
	return true
}

// covered returns the time a whole value covers: its duration, at most
// its nominal length nomS plus 0.5 % (a 3 s value is 15 windows of 10
// cycles, a little longer below 50 Hz), nomS when the duration is missing.
func covered(r *metrics.Record, nomS float64) float64 {
	d := r.DurationS
	if !(d > 0) {
		return nomS
	}
	return math.Min(d, nomS*1.005)
}

// value returns q's value in r, in percent of its basis, or null.
func (e *Evaluator) value(q *quantity, r *metrics.Record) float64 {
	c := &r.Channels[q.ch]
	switch {
	case q.kind == metrics.Voltage && q.hIdx < 0:
		return c.THDH50Pct
	case q.kind == metrics.Voltage:
		return 100 * c.H[q.hIdx].RMS / e.cfg.NominalV
	}
	il := e.cfg.IL
	if own := e.s.Channels[q.ch].ILA; own > 0 {
		il = own // a circuit's own IL (several circuits on one bus)
	}
	switch {
	case q.hIdx >= 0:
		return 100 * c.H[q.hIdx].RMS / il
	case e.s.IL(q.ch) > 0:
		// stored against the layout's IL: rescale to the evaluated one
		return c.TDDH50Pct * e.s.IL(q.ch) / il
	}
	// no IL in the layout, so no stored TDD: from orders 2..50
	var ss float64
	for j := range c.H {
		if h := c.H[j].H; h >= 2 && h <= maxTDDOrder {
			ss += c.H[j].RMS * c.H[j].RMS
		}
	}
	return 100 * math.Sqrt(ss) / il
}

// closeDays closes every day before upTo: each quantity's daily 99th
// percentile is taken from its tail, which is then emptied.
func (e *Evaluator) closeDays(upTo int) {
	for ; e.cur < upTo; e.cur++ {
		d := e.cur
		for i := range e.qs {
			q := &e.qs[i]
			q.dayN[d] = q.day.n
			if v, ok := q.day.percentile(99); ok {
				q.daily[d] = v
			} else if q.day.n > 0 {
				e.days[d].Overfull = true
			}
			q.day.reset()
		}
		if e.days[d].Used > overfill*Day3sValues {
			e.days[d].Overfull = true
		}
	}
}

// Result closes the evaluation and returns its result. Later calls return
// the same Result; Add fails with ErrFinished after it.
func (e *Evaluator) Result() *Result {
	if e.res != nil {
		return e.res
	}
	e.closeDays(Days)
	mc := e.cfg.MinCoverage
	res := &Result{
		Edition: limits.Edition, Start: e.cfg.Start, End: e.end, MinCoverage: mc,
		NominalV: e.cfg.NominalV, BusV: e.cfg.BusV, VIndivLimit: e.vInd, VTHDLimit: e.vTHD,
		IL: e.cfg.IL, Isc: e.cfg.Isc, Ratio: e.ratio, Row: e.rowI.RatioLabel, TDDLimit: e.rowI.TDD,
		Outside: e.outside,
	}
	for d := range e.days {
		day := &e.days[d]
		day.Coverage = math.Min(1, day.Covered/dayLength.Seconds())
		day.Complete = day.Coverage >= mc && !day.Overfull
	}
	w := &e.week
	w.Coverage = math.Min(1, w.Covered/(Days*dayLength).Seconds())
	w.Overfull = w.Used > overfill*Week10minValues
	w.Complete = w.Coverage >= mc && !w.Overfull
	res.Days, res.Week = e.days, e.week
	for i := range e.qs {
		q := &e.qs[i]
		if q.kind == metrics.Voltage {
			res.Lines = append(res.Lines, e.dailyLine(q, multV3s), e.weeklyLine(q, WeeklyP95, multV10min))
		} else {
			res.Lines = append(res.Lines, e.dailyLine(q, multI3s),
				e.weeklyLine(q, WeeklyP99, multI10p99), e.weeklyLine(q, WeeklyP95, multI10p95))
		}
	}
	res.Verdict = Pass
	for i := range res.Lines {
		switch v := res.Lines[i].Verdict; {
		case v == Fail:
			res.Verdict = Fail
		case v == Incomplete && res.Verdict == Pass:
			res.Verdict = Incomplete
		}
	}
	if len(res.Lines) == 0 {
		res.Verdict = Incomplete
	}
	res.Notes = e.notes()
	e.res = res
	return res
}

func (e *Evaluator) line(q *quantity, st Statistic, mult float64) Line {
	return Line{
		Channel: e.s.Channels[q.ch].Name, Kind: q.kind, Quantity: q.name, Order: q.order, Basis: q.basis,
		Statistic: st, Limit: q.limit, Multiplier: mult, Threshold: q.limit * mult, WorstDay: -1,
		Nulls: q.nulls,
	}
}

// dailyLine judges each day's 99th percentile: fail when a complete day
// reaches the threshold; else incomplete when any day is incomplete (for
// the day, or for this quantity's values in it); else pass.
func (e *Evaluator) dailyLine(q *quantity, mult float64) Line {
	l := e.line(q, DailyP99, mult)
	l.Value = math.NaN()
	var fail, incomplete bool
	for d := range q.daily {
		v := q.daily[d]
		l.Daily[d] = v
		l.Values += int(q.dayN[d])
		day := &e.days[d]
		cov := 0.0
		if day.Used > 0 {
			// the day's coverage, less the share of this quantity's nulls
			cov = day.Coverage * float64(q.dayN[d]) / float64(day.Used)
		}
		l.Coverage += cov / Days
		if !math.IsNaN(v) && (l.WorstDay < 0 || v > l.Value) {
			l.Value, l.WorstDay = v, d
		}
		if !day.Complete || cov < e.cfg.MinCoverage || math.IsNaN(v) {
			incomplete = true
			continue
		}
		l.DaysJudged++
		if !(v < l.Threshold) {
			fail = true
		}
	}
	l.Verdict = verdict(fail, incomplete)
	return l
}

// weeklyLine judges the week's pct-th percentile of the 10 min values.
func (e *Evaluator) weeklyLine(q *quantity, st Statistic, mult float64) Line {
	l := e.line(q, st, mult)
	for d := range l.Daily {
		l.Daily[d] = math.NaN()
	}
	pct := 95
	if st == WeeklyP99 {
		pct = 99
	}
	v, ok := q.week.percentile(pct)
	l.Value, l.Values = v, int(q.week.n)
	if e.week.Used > 0 {
		l.Coverage = math.Min(1, e.week.Covered/(Days*dayLength).Seconds()) * float64(q.week.n) / float64(e.week.Used)
	}
	incomplete := !ok || !e.week.Complete || l.Coverage < e.cfg.MinCoverage
	l.Verdict = verdict(!incomplete && !(v < l.Threshold), incomplete)
	return l
}

func verdict(fail, incomplete bool) Verdict {
	switch {
	case fail:
		return Fail
	case incomplete:
		return Incomplete
	}
	return Pass
}

// notes states the evaluation's assumptions and the confidence of its
// sources (REFERENCE.md §1.3–1.6 marks).
func (e *Evaluator) notes() []string {
	n := []string{
		"IEEE 519 limits apply at the point of common coupling; measured inside a cabinet these figures are a reference.",
		"Evaluated against " + limits.Edition + " clause 5; IEEE 519-2022 differs (for example in the even-harmonic current limits).",
		"Percentiles are nearest-rank: the p-th percentile of n values is the value of rank ⌈p·n/100⌉ in ascending order.",
		fmt.Sprintf("Coverage is the share of the period's time covered by whole values used (about %d 3 s values a day, %d 10 min values a week), never more than 100 %%; a day or the week needs %.0f %% (our threshold); with less the statistic is incomplete, never passed.",
			Day3sValues, Week10minValues, 100*e.cfg.MinCoverage),
		"Values flagged event or no_lock are excluded and counted (IEC 61000-4-30 flagging concept), and so are partial values (a 3 s block cut short by a 10-minute tick, the first after a start); null values are skipped and counted.",
		"A wall-clock step never rewrites stored values: a step back makes records overlap, which can only add coverage up to 100 %, and a day holding far more values than fit is marked as overlapping and not judged.",
		fmt.Sprintf("Voltage: THD (orders 2-50) in %% of the fundamental; individual harmonics in %% of the nominal voltage %g V. Table 1 row for a %.0f V bus: %g %% individual, %g %% THD. Daily p99 of 3 s values below 1.5 x, weekly p95 of 10 min values below 1.0 x Table 1 (clause 5.1, confirmed).",
			e.cfg.NominalV, e.cfg.BusV, e.vInd, e.vTHD),
	}
	if e.cfg.IL > 0 {
		n = append(n,
			fmt.Sprintf("Current: TDD (orders 2-50) and harmonics in %% of IL = %g A. Daily p99 of 3 s values below 2.0 x, weekly p99 of 10 min values below 1.5 x, weekly p95 of 10 min values below 1.0 x Table 2 (clause 5.2 multipliers from memory, unconfirmed).", e.cfg.IL),
			fmt.Sprintf("Table 2 row %s (TDD %g %%): values confirmed in the 1992 table, kept in 2014 from memory; even harmonics at 25 %% of the odd limits (confirmed for 1992, 2014 from memory); the bands start at h = 3, so h2 is not assessed.", e.rowI.RatioLabel, e.rowI.TDD))
		if e.cfg.Isc == 0 {
			n = append(n, "ISC not set: the strictest Table 2 row (<20) is used.")
		}
	} else {
		n = append(n, "IL not set: currents are not evaluated.")
	}
	if !e.s.AllOrders {
		n = append(n, "Not all orders 1-50 are computed: THD and TDD (orders 2-50) are not evaluated, only the computed orders.")
	}
	if e.outside > 0 {
		n = append(n, fmt.Sprintf("%d records outside the week (or of other intervals) were ignored.", e.outside))
	}
	return n
}
