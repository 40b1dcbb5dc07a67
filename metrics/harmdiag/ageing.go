package harmdiag

import (
	"math"
	"time"

	"github.com/gridloupe/gridloupe/metrics"
)

// BinPct is the width of a load bin, percent of the reference current
// (IL, else the largest fundamental seen). TDD grows with load for a given
// reactor, so only values within one bin are compared (common practice,
// no source).
const BinPct = 10

// Ageing trends TDD at comparable load: each 10 min record's mean phase
// TDD (orders 2..50 when computed) goes to the bin of its mean phase
// fundamental current and to its week (7 days from the start). A TDD
// rising in the same bin week after week points at a reactor or filter
// losing its effect (or at a change in the supply); a change of load alone
// does not move it. It keeps 24 bytes per record (a year of 10 min records
// is about 1.3 MB).
type Ageing struct {
	s      *metrics.Setup
	start  time.Time
	ref    float64
	points []point
	maxI1  float64
}

type point struct {
	week    int
	i1, tdd float64
}

// NewAgeing bins records of s from start by fundamental current relative
// to refA (IL; 0 = relative to the largest fundamental seen).
func NewAgeing(s *metrics.Setup, start time.Time, refA float64) *Ageing {
	return &Ageing{s: s, start: start, ref: refA}
}

// Load returns a record's mean phase fundamental current (A) and mean
// phase TDD (%, orders 2..50 when computed), the two coordinates of the
// ageing indicator; ok is false without TDD (no IL) or without a phase
// current.
func Load(s *metrics.Setup, r *metrics.Record) (i1, tdd float64, ok bool) {
	n := 0
	for _, pr := range s.Pairs {
		c := r.Channels[pr.I]
		t := c.TDDH50Pct
		if metrics.IsNull(t) {
			t = c.TDDPct
		}
		if metrics.IsNull(t) || metrics.IsNull(c.H[0].RMS) {
			continue
		}
		i1 += c.H[0].RMS
		tdd += t
		n++
	}
	if n == 0 {
		return 0, 0, false
	}
	return i1 / float64(n), tdd / float64(n), true
}

// Add takes one 10 min record.
func (a *Ageing) Add(r *metrics.Record) {
	if r.Flags&(metrics.FlagNoLock|metrics.FlagBadSample|metrics.FlagEvent) != 0 || r.Start.Before(a.start) {
		return
	}
	i1, tdd, ok := Load(a.s, r)
	if !ok {
		return
	}
	p := point{week: int(r.Start.Sub(a.start) / (7 * 24 * time.Hour)), i1: i1, tdd: tdd}
	a.maxI1 = math.Max(a.maxI1, p.i1)
	a.points = append(a.points, p)
}

// Table is the ageing indicator: mean TDD per week and load bin.
type Table struct {
	Start time.Time
	Weeks int
	Bins  []int       // lower edges of the bins with data, % of RefA
	RefA  float64     // the reference current, A
	Basis string      // what the reference is
	TDD   [][]float64 // [week][bin], %; NaN with fewer than MinCell values
	N     [][]int     // values per cell
	Best  int         // lower edge of the bin with the most filled weeks
	Trend float64     // that bin's TDD in its last filled week minus its first, points; NaN with fewer than 2
}

// MinCell is how many 10 min values a week's bin needs to count: one day
// at that load (common practice, no source).
const MinCell = 24

// Table returns the indicator.
func (a *Ageing) Table() Table {
	t := Table{Start: a.start, RefA: a.ref, Basis: "IL", Trend: math.NaN(), Best: -1}
	if t.RefA <= 0 {
		t.RefA, t.Basis = a.maxI1, "the largest fundamental current stored"
	}
	if len(a.points) == 0 || !(t.RefA > 0) {
		return t
	}
	type acc struct {
		sum float64
		n   int
	}
	cells := map[[2]int]*acc{}
	used := map[int]bool{}
	for _, p := range a.points {
		b := int(100 * p.i1 / t.RefA / BinPct)
		k := [2]int{p.week, b}
		if cells[k] == nil {
			cells[k] = &acc{}
		}
		cells[k].sum += p.tdd
		cells[k].n++
		used[b] = true
		t.Weeks = max(t.Weeks, p.week+1)
	}
	for b := 0; b <= 1000/BinPct; b++ {
		if used[b] {
			t.Bins = append(t.Bins, b*BinPct)
		}
	}
	t.TDD = make([][]float64, t.Weeks)
	t.N = make([][]int, t.Weeks)
	filled := make([]int, len(t.Bins))
	for w := range t.Weeks {
		t.TDD[w] = make([]float64, len(t.Bins))
		t.N[w] = make([]int, len(t.Bins))
		for j, edge := range t.Bins {
			t.TDD[w][j] = math.NaN()
			if c := cells[[2]int{w, edge / BinPct}]; c != nil {
				t.N[w][j] = c.n
				if c.n >= MinCell {
					t.TDD[w][j] = c.sum / float64(c.n)
					filled[j]++
				}
			}
		}
	}
	bj := -1
	for j, f := range filled {
		if f > 0 && (bj < 0 || f > filled[bj]) {
			bj = j
		}
	}
	if bj < 0 {
		return t
	}
	t.Best = t.Bins[bj]
	first, last := math.NaN(), math.NaN()
	for w := range t.Weeks {
		if v := t.TDD[w][bj]; !math.IsNaN(v) {
			if math.IsNaN(first) {
				first = v
			}
			last = v
		}
	}
	if filled[bj] >= 2 {
		t.Trend = last - first
	}
	return t
}
