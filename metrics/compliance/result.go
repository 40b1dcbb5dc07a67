package compliance

import (
	"time"

	"github.com/gridloupe/gridloupe/metrics"
)

// Statistic is one of the clause 5 statistics.
type Statistic uint8

// Statistics, in report order.
const (
	DailyP99  Statistic = iota + 1 // 99th percentile of each day's 3 s values; the worst day is reported
	WeeklyP99                      // 99th percentile of the week's 10 min values (currents only)
	WeeklyP95                      // 95th percentile of the week's 10 min values
)

var statNames = [...]string{DailyP99: "daily_p99_3s", WeeklyP99: "weekly_p99_10min", WeeklyP95: "weekly_p95_10min"}

// String returns the statistic's stable name: daily_p99_3s,
// weekly_p99_10min or weekly_p95_10min.
func (s Statistic) String() string {
	if s > 0 && int(s) < len(statNames) {
		return statNames[s]
	}
	return "invalid"
}

// Verdict is the outcome of one line or of the whole evaluation.
type Verdict uint8

// Verdicts. Incomplete means too little data to pass: coverage below the
// threshold, or no values at all.
const (
	Pass Verdict = iota + 1
	Fail
	Incomplete
)

var verdictNames = [...]string{Pass: "pass", Fail: "fail", Incomplete: "incomplete"}

// String returns pass, fail or incomplete.
func (v Verdict) String() string {
	if v > 0 && int(v) < len(verdictNames) {
		return verdictNames[v]
	}
	return "invalid"
}

// Bases of the percentages, as Line.Basis names them.
const (
	BasisFundamental = "fundamental" // % of the channel's own fundamental (voltage THD)
	BasisNominal     = "nominal_v"   // % of the nominal (rated) voltage (voltage individual harmonics)
	BasisIL          = "il"          // % of IL, the maximum demand load current (TDD, current harmonics)
)

// Days is the length of the evaluated period.
const Days = 7

// Line is one quantity of one channel under one statistic.
type Line struct {
	Channel    string
	Kind       metrics.Kind
	Quantity   string    // thd_h50, tdd_h50, or h<order> (h5, h11, ...)
	Order      int       // harmonic order; 0 for thd_h50 and tdd_h50
	Basis      string    // BasisFundamental, BasisNominal or BasisIL
	Statistic  Statistic //
	Value      float64   // percent; for DailyP99 the worst day's; NaN when there are no values
	WorstDay   int       // DailyP99: index in Result.Days of Value's day; −1 otherwise or without values
	Daily      [Days]float64
	Limit      float64 // the table's limit, percent
	Multiplier float64 // clause 5 multiplier of the limit
	Threshold  float64 // Limit × Multiplier: Value must be below it
	Verdict    Verdict
	Coverage   float64 // fraction of the period's time this quantity's values cover, in [0, 1]: DailyP99 the week's 3 s time, weekly the week's 10 min time
	DaysJudged int     // DailyP99: days complete for this quantity (those a verdict rests on); 0 otherwise
	Values     int     // values used (excluded and null values not counted)
	Nulls      int     // null values of this quantity in records that were not excluded
}

// Day summarises one day's 3 s records (all quantities).
type Day struct {
	Start    time.Time
	Expected int     // 3 s values in 24 h at the nominal length: 28,800
	Records  int     // 3 s records whose start lies in the day
	Event    int     // of them, excluded for the event flag
	NoLock   int     // of them, excluded for no_lock (and not event)
	Partial  int     // of them, excluded as partial (shorter than 3 s; not event or no_lock)
	Used     int     // Records − Event − NoLock − Partial: whole values used
	Covered  float64 // s, summed durations of the used values
	Coverage float64 // Covered / 24 h, at most 1: the share of the day whole used values cover
	Overfull bool    // more records than the percentile tails were sized for (overlapping records after a clock step?)
	Complete bool    // Coverage ≥ the threshold and not Overfull
}

// NoData reports whether no record at all started in the period.
func (d *Day) NoData() bool { return d.Records == 0 }

// Week summarises the week's 10 min records.
type Week struct {
	Expected int // 1,008
	Records  int
	Event    int
	NoLock   int
	Partial  int
	Used     int
	Covered  float64 // s
	Coverage float64 // Covered / 7 days, at most 1
	Overfull bool
	Complete bool
}

// NoData reports whether no record at all started in the week.
func (w *Week) NoData() bool { return w.Records == 0 }

// Result is a finished evaluation. Lines come in setup channel order, then
// quantity (thd_h50 or tdd_h50 first, then ascending orders), then
// statistic.
type Result struct {
	Edition     string // limits.Edition
	Start, End  time.Time
	MinCoverage float64
	NominalV    float64 // V, phase-to-neutral (basis of voltage individual harmonics)
	BusV        float64 // V, selects the Table 1 row
	VIndivLimit float64 // Table 1 individual harmonic limit, %
	VTHDLimit   float64 // Table 1 THD limit, %
	IL, Isc     float64 // A; IL 0 = currents not evaluated
	Ratio       float64 // Isc/IL; NaN when either is unset
	Row         string  // Table 2 row label
	TDDLimit    float64 // Table 2 TDD limit, %
	Days        [Days]Day
	Week        Week
	Outside     int // records outside the week or of another interval, ignored
	Lines       []Line
	Verdict     Verdict
	Notes       []string // what the evaluation assumed, with the confidence of its sources
}

// Counts returns how many lines passed, failed and were incomplete.
func (r *Result) Counts() (pass, fail, incomplete int) {
	for i := range r.Lines {
		switch r.Lines[i].Verdict {
		case Pass:
			pass++
		case Fail:
			fail++
		default:
			incomplete++
		}
	}
	return pass, fail, incomplete
}
