package energy

import (
	"fmt"
	"math"
	"slices"
	"time"

	"github.com/gridloupe/gridloupe/metrics"
)

// Method is how demand is averaged.
type Method uint8

// Demand methods.
const (
	Fixed   Method = iota + 1 // clock-aligned blocks of the interval; the value changes at each block's end
	Sliding                   // the last interval, moved with each 3 s value
)

// Month is one calendar month's (UTC) maximum demand.
type Month struct {
	Month string     // "2006-01"
	MaxA  [3]float64 // maximum demand current per phase a, b, c, A; NaN when the phase has no current
	MaxW  float64    // maximum total active-power demand, W
	At    time.Time  // end of the interval that set the largest phase current
}

// MaxPhaseA returns the largest of the month's per-phase maxima (NaN when none).
func (m Month) MaxPhaseA() float64 {
	v := math.NaN()
	for _, a := range m.MaxA {
		if !math.IsNaN(a) && (math.IsNaN(v) || a > v) {
			v = a
		}
	}
	return v
}

// Demand is the present state.
type Demand struct {
	Interval time.Duration
	Method   Method
	A        [3]float64 // present demand current per phase, A; NaN until a whole interval is covered
	W        float64    // present total active-power demand, W
	End      time.Time  // end of the interval A and W cover
	Month    Month      // this month's maxima so far
}

// Demander averages 3 s records into demand. Not safe for concurrent use.
type Demander struct {
	iv      time.Duration
	method  Method
	phases  [3]int // current channel index per phase, −1 none
	circuit int    // with circuits: the record's circuit whose power counts (the first); −1 without
	months  []Month

	// fixed: the open block
	blockStart time.Time
	sumA       [3]float64
	sumW, secs float64
	// sliding: the 3 s values of the last interval
	ring []sample

	cur Demand
}

type sample struct {
	end time.Time
	a   [3]float64
	w   float64
	dur float64
}

// NewDemander returns a demander for records of s over interval iv
// (dividing an hour) with method, starting from the stored months.
func NewDemander(s *metrics.Setup, iv time.Duration, method Method, months []Month) (*Demander, error) {
	if iv <= 0 || time.Hour%iv != 0 {
		return nil, fmt.Errorf("energy: demand interval %v must divide an hour", iv)
	}
	if method != Fixed && method != Sliding {
		return nil, fmt.Errorf("energy: unknown demand method %d", method)
	}
	d := &Demander{iv: iv, method: method, phases: s.IIdx, circuit: -1, months: slices.Clone(months)}
	if len(s.Circuits) > 0 {
		// Several circuits on one bus: the demand is the first circuit's
		// (the README asks for the incomer first), its own phase currents
		// and total power, never a sum that counts a feeder twice.
		c := s.Circuits[0]
		d.circuit = 0
		for p, ci := range c.Sub.IIdx {
			d.phases[p] = -1
			if ci >= 0 {
				d.phases[p] = c.Map[ci]
			}
		}
	}
	slices.SortFunc(d.months, func(a, b Month) int { return compareStr(a.Month, b.Month) })
	d.cur = Demand{Interval: iv, Method: method, A: nan3(), W: math.NaN(), Month: Month{MaxA: nan3(), MaxW: math.NaN()}}
	return d, nil
}

func compareStr(a, b string) int {
	switch {
	case a < b:
		return -1
	case a > b:
		return 1
	}
	return 0
}

func nan3() [3]float64 { return [3]float64{math.NaN(), math.NaN(), math.NaN()} }

// Add takes one 3 s record. Records flagged no_lock or bad_sample, and
// null values, count as time without load (a demand meter sees no current
// while the supply is off).
func (d *Demander) Add(r *metrics.Record) {
	if r.Interval != metrics.Int3s || !(r.DurationS > 0) {
		return
	}
	end := r.Start.Add(time.Duration(r.DurationS * float64(time.Second)))
	var a [3]float64
	for p, ci := range d.phases {
		a[p] = math.NaN()
		if ci >= 0 {
			a[p] = zeroNull(r.Channels[ci].RMS)
		}
	}
	pw := r.Total.P
	if d.circuit >= 0 {
		pw = math.NaN()
		if d.circuit < len(r.Circuits) && r.Circuits[d.circuit].Rec != nil {
			pw = r.Circuits[d.circuit].Rec.Total.P
		}
	}
	w := zeroNull(pw)
	if d.method == Sliding {
		d.slide(sample{end: end, a: a, w: w, dur: r.DurationS})
		return
	}
	start := r.Start.Truncate(d.iv)
	if !d.blockStart.IsZero() && !start.Equal(d.blockStart) {
		d.closeBlock()
	}
	if d.blockStart.IsZero() || !start.Equal(d.blockStart) {
		d.blockStart, d.sumA, d.sumW, d.secs = start, [3]float64{}, 0, 0
	}
	for p := range a {
		d.sumA[p] += a[p] * r.DurationS
	}
	d.sumW += w * r.DurationS
	d.secs += r.DurationS
}

func zeroNull(v float64) float64 {
	if metrics.IsNull(v) {
		return 0
	}
	return v
}

// blockCover is the share of an interval that must hold values before its
// demand counts (a start-up or a gap leaves a block partly empty; an
// average over a few seconds is not a demand). Common practice, no source.
const blockCover = 0.9

func (d *Demander) closeBlock() {
	if d.secs >= blockCover*d.iv.Seconds() {
		var a [3]float64
		for p := range a {
			a[p] = d.sumA[p] / d.secs
		}
		d.set(a, d.sumW/d.secs, d.blockStart.Add(d.iv))
	}
}

func (d *Demander) slide(s sample) {
	d.ring = append(d.ring, s)
	from := s.end.Add(-d.iv)
	i := 0
	for i < len(d.ring) && d.ring[i].end.Before(from.Add(time.Duration(d.ring[i].dur*float64(time.Second)))) {
		i++
	}
	d.ring = d.ring[i:]
	var sumA [3]float64
	var sumW, secs float64
	for _, x := range d.ring {
		for p := range sumA {
			sumA[p] += x.a[p] * x.dur
		}
		sumW += x.w * x.dur
		secs += x.dur
	}
	if secs < blockCover*d.iv.Seconds() {
		return
	}
	var a [3]float64
	for p := range a {
		a[p] = sumA[p] / secs
	}
	d.set(a, sumW/secs, s.end)
}

// set records a finished demand value and updates its month's maxima.
func (d *Demander) set(a [3]float64, w float64, end time.Time) {
	d.cur.A, d.cur.W, d.cur.End = a, w, end
	key := end.Add(-time.Nanosecond).UTC().Format("2006-01") // an interval ending at midnight belongs to the month it covered
	i := slices.IndexFunc(d.months, func(m Month) bool { return m.Month == key })
	if i < 0 {
		d.months = append(d.months, Month{Month: key, MaxA: nan3(), MaxW: math.NaN()})
		slices.SortFunc(d.months, func(a, b Month) int { return compareStr(a.Month, b.Month) })
		i = slices.IndexFunc(d.months, func(m Month) bool { return m.Month == key })
	}
	m := &d.months[i]
	for p := range a {
		if !math.IsNaN(a[p]) && (math.IsNaN(m.MaxA[p]) || a[p] > m.MaxA[p]) {
			m.MaxA[p] = a[p]
			m.At = end
		}
	}
	if math.IsNaN(m.MaxW) || w > m.MaxW {
		m.MaxW = w
	}
	d.cur.Month = *m
}

// Demand returns the present demand.
func (d *Demander) Demand() Demand { return d.cur }

// Months returns every month's maxima, oldest first.
func (d *Demander) Months() []Month { return slices.Clone(d.months) }

// IL is an estimate of IEEE 519's maximum demand load current.
type IL struct {
	A      float64 // NaN when it cannot be estimated
	Months int     // months averaged
	Basis  string  // how A was found, for reports
}

// EstimateIL returns IL as IEEE 519-2014 defines it (REFERENCE.md §1.2,
// from memory): the average of the maximum monthly demand currents over
// the preceding 12 months, here over at most the 12 newest months stored,
// each month's maximum being the largest phase's. The month in progress
// counts only when it is the only one (a new installation; the basis says
// so).
func EstimateIL(months []Month, now time.Time, iv time.Duration) IL {
	ms := slices.Clone(months)
	slices.SortFunc(ms, func(a, b Month) int { return compareStr(a.Month, b.Month) })
	cur := now.UTC().Format("2006-01")
	var done []Month
	for _, m := range ms {
		if m.Month < cur && !math.IsNaN(m.MaxPhaseA()) {
			done = append(done, m)
		}
	}
	partial := false
	if len(done) == 0 {
		for _, m := range ms {
			if m.Month == cur && !math.IsNaN(m.MaxPhaseA()) {
				done, partial = []Month{m}, true
			}
		}
	}
	if len(done) == 0 {
		return IL{A: math.NaN(), Basis: "no monthly maximum demand stored yet"}
	}
	if len(done) > 12 {
		done = done[len(done)-12:]
	}
	sum := 0.0
	for _, m := range done {
		sum += m.MaxPhaseA()
	}
	il := IL{A: sum / float64(len(done)), Months: len(done)}
	il.Basis = fmt.Sprintf("estimated: average of the maximum %v demand currents of %d month(s) stored (%s to %s), IEEE 519-2014's IL definition over 12 months",
		iv, len(done), done[0].Month, done[len(done)-1].Month)
	if partial {
		il.Basis += "; only the month in progress is stored, so this is a lower bound"
	} else if len(done) < 12 {
		il.Basis += fmt.Sprintf("; %d of the 12 months the definition averages", len(done))
	}
	return il
}
