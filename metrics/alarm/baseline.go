package alarm

import (
	"fmt"
	"math"
	"time"

	"github.com/gridloupe/gridloupe/metrics"
)

// Baseline makes a rule relative to a commissioning baseline: for Learn of
// sample time from the first value it sees, the rule learns the mean of
// its metric per load bin and raises nothing; afterwards its Threshold and
// Deadband are a rise above (Above) or a drop below (below rules) the
// learned mean of the bin the record's load falls in. A bin that learned
// fewer than BaselineMinValues values has no baseline: its records are
// held like null values. This is what catches a reactor or filter that
// ages long before a PCC limit is crossed: the distortion creeps up from
// what this cabinet showed at the same load when it was new.
type Baseline struct {
	Learn time.Duration // commissioning period, sample time; > 0
	// Base is the current, A, the load bins are percentages of: IL (il_a),
	// else the load channels' full scale; > 0.
	Base float64
}

// Load bins of a baseline, by the mean fundamental current of the rule's
// load channels in percent of Baseline.Base: [0, 10), [10, 20), …,
// [100, 110) and 110 and above. Ten-percent bins: common practice, no
// source; distortion of a drive changes slowly with load, the bins keep
// a rise at the same load apart from a change of load.
const (
	BaselineBins      = 12
	baselineBinPct    = 10
	BaselineMinValues = 3 // values a bin needs to be a baseline (our choice)
)

// BinStat is one load bin of a learned baseline.
type BinStat struct {
	N    uint32  `json:"n"`    // values learned
	Mean float64 `json:"mean"` // their mean, metric units
}

// Learned is a rule's commissioning baseline, part of its State.
type Learned struct {
	From time.Time             `json:"from"` // start of the first record learned; zero = not started
	Done bool                  `json:"done"` // the commissioning period is over
	Bins [BaselineBins]BinStat `json:"bins"`
}

// bin returns the load bin of current a (A) against base, or −1.
func bin(a, base float64) int {
	if !(a >= 0) || !(base > 0) {
		return -1
	}
	k := int(100 * a / base / baselineBinPct)
	return min(k, BaselineBins-1)
}

// BinLabel names load bin k, e.g. "80-90 % load" or "110 % load and above".
func BinLabel(k int) string {
	if k >= BaselineBins-1 {
		return fmt.Sprintf("%d %% load and above", (BaselineBins-1)*baselineBinPct)
	}
	return fmt.Sprintf("%d-%d %% load", k*baselineBinPct, (k+1)*baselineBinPct)
}

// fundA is the mean fundamental current of the channels chs in r (the
// baseline's load), NaN when any is null.
func fundA(r *metrics.Record, chs []int) float64 {
	if len(chs) == 0 {
		return math.NaN()
	}
	var sum float64
	for _, ci := range chs {
		if ci < 0 || ci >= len(r.Channels) || len(r.Channels[ci].H) == 0 || r.Channels[ci].H[0].H != 1 {
			return math.NaN()
		}
		sum += r.Channels[ci].H[0].RMS
	}
	return sum / float64(len(chs))
}

// relative turns v into its deviation from the baseline for rule i at
// record r (start st, end t): learning (returns NaN, learned=true), no
// baseline for the bin (NaN), or v − mean with the mean.
func (e *Evaluator) relative(i int, r *metrics.Record, v float64, t time.Time) (dev, mean float64, bin0 int) {
	ru, c, st := &e.rules[i], &e.c[i], &e.st[i]
	b := bin(fundA(r, c.binCh), ru.Baseline.Base)
	if b < 0 {
		return math.NaN(), math.NaN(), -1
	}
	l := &st.Learned
	if l.From.IsZero() {
		l.From = r.Start
	}
	if !l.Done && t.Sub(l.From) <= ru.Baseline.Learn {
		bs := &l.Bins[b]
		bs.N++
		bs.Mean += (v - bs.Mean) / float64(bs.N)
		return math.NaN(), math.NaN(), b
	}
	l.Done = true
	bs := l.Bins[b]
	if bs.N < BaselineMinValues {
		return math.NaN(), math.NaN(), b
	}
	return v - bs.Mean, bs.Mean, b
}
