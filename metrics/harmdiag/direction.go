package harmdiag

import (
	"math"

	"github.com/gridloupe/gridloupe/metrics"
)

// Direction is one order's harmonic active power over the records seen.
// P_h = Σ over phases of V_h·I_h·cos(θv,h − θi,h), with the current
// measured into the cabinet: positive means harmonic power flows from the
// supply into the cabinet (the order is absorbed), negative means the
// cabinet is the source of that order (it injects it), as a non-linear
// load such as a diode front end does for its characteristic orders.
type Direction struct {
	H        int
	MeanW    float64 // mean P_h over the records with a value, W; NaN without
	Injects  int     // records with P_h < 0
	Absorbs  int     // records with P_h > 0
	Records  int     // records with a value
	MeanIPct float64 // mean current harmonic, % of fundamental (largest phase), to show which orders matter
	MeanVI   float64 // mean Σ V_h·I_h, VA: the largest |P_h| could be
}

// Quadrature is the smallest |P_h| / Σ V_h·I_h that gives a direction:
// below it V_h and I_h are within about 3° of quadrature (cos 87.1° =
// 0.05), within the phase error sensors commonly have at harmonic
// frequencies, so the sign means nothing (common practice, no source). A
// lossless (purely inductive) supply impedance gives exactly 0.
const Quadrature = 0.05

// Sense names the direction of power p of a harmonic with Σ V·I = vi:
// "injects", "absorbs", or "neither" within Quadrature.
func Sense(p, vi float64) string {
	switch {
	case !(vi > 0) || math.Abs(p) < Quadrature*vi:
		return "neither"
	case p < 0:
		return "injects"
	}
	return "absorbs"
}

// Verdict is "injects" or "absorbs" when 90 % of the records agree (common
// practice, no source), "neither" when the mean power is within
// Quadrature of zero, "mixed" otherwise, or "" without values.
func (d Direction) Verdict() string {
	switch {
	case d.Records == 0:
		return ""
	case Sense(d.MeanW, d.MeanVI) == "neither":
		return "neither"
	case float64(d.Injects) >= 0.9*float64(d.Records):
		return "injects"
	case float64(d.Absorbs) >= 0.9*float64(d.Records):
		return "absorbs"
	}
	return "mixed"
}

// Directions accumulates harmonic power directions per order.
type Directions struct {
	s     *metrics.Setup
	dirs  []Direction
	sumW  []float64
	sumVI []float64
	sumI  []float64
	nI    []int
	index []int // order → position in s.Orders, −1
}

// NewDirections returns an accumulator for orders 2..max of s.
func NewDirections(s *metrics.Setup) *Directions {
	d := &Directions{s: s}
	d.index = make([]int, 51)
	for i := range d.index {
		d.index[i] = -1
	}
	for k, h := range s.Orders {
		if h >= 2 && h <= 50 {
			d.index[h] = k
			d.dirs = append(d.dirs, Direction{H: h})
		}
	}
	d.sumW = make([]float64, len(d.dirs))
	d.sumVI = make([]float64, len(d.dirs))
	d.sumI = make([]float64, len(d.dirs))
	d.nI = make([]int, len(d.dirs))
	return d
}

// Add takes one record (10 min records are what the report feeds).
func (d *Directions) Add(r *metrics.Record) {
	if r.Flags&(metrics.FlagNoLock|metrics.FlagBadSample) != 0 {
		return
	}
	for j := range d.dirs {
		k := d.index[d.dirs[j].H]
		p, vi, ok := 0.0, 0.0, false
		maxPct := math.NaN()
		for _, pr := range d.s.Pairs {
			v, i := r.Channels[pr.V].H[k], r.Channels[pr.I].H[k]
			if !metrics.IsNull(i.Pct) && (math.IsNaN(maxPct) || i.Pct > maxPct) {
				maxPct = i.Pct
			}
			if metrics.IsNull(v.PhaseDeg) || metrics.IsNull(i.PhaseDeg) || metrics.IsNull(v.RMS) || metrics.IsNull(i.RMS) {
				continue
			}
			p += v.RMS * i.RMS * math.Cos((v.PhaseDeg-i.PhaseDeg)*math.Pi/180)
			vi += v.RMS * i.RMS
			ok = true
		}
		if !math.IsNaN(maxPct) {
			d.sumI[j] += maxPct
			d.nI[j]++
		}
		if !ok {
			continue
		}
		dir := &d.dirs[j]
		dir.Records++
		d.sumW[j] += p
		d.sumVI[j] += vi
		switch Sense(p, vi) {
		case "injects":
			dir.Injects++
		case "absorbs":
			dir.Absorbs++
		}
	}
}

// Result returns every order's direction, ascending orders.
func (d *Directions) Result() []Direction {
	out := append([]Direction(nil), d.dirs...)
	for j := range out {
		out[j].MeanW, out[j].MeanIPct, out[j].MeanVI = math.NaN(), math.NaN(), math.NaN()
		if out[j].Records > 0 {
			out[j].MeanW = d.sumW[j] / float64(out[j].Records)
			out[j].MeanVI = d.sumVI[j] / float64(out[j].Records)
		}
		if d.nI[j] > 0 {
			out[j].MeanIPct = d.sumI[j] / float64(d.nI[j])
		}
	}
	return out
}
