package metrics

import (
	"math"
	"math/cmplx"

	"github.com/gridloupe/gridloupe/metrics/quantity"
)

// acc accumulates one key over the added records, skipping null values
// (DESIGN: a null window value is skipped for that key; all null → null).
type acc struct {
	sum float64
	n   int
}

func (a *acc) add(x float64) {
	if math.IsNaN(x) || math.IsInf(x, 0) {
		return
	}
	a.sum += x
	a.n++
}

// addSq accumulates x² for the root-mean-square rule.
func (a *acc) addSq(x float64) {
	if math.IsNaN(x) || math.IsInf(x, 0) {
		return
	}
	a.sum += x * x
	a.n++
}

// mean returns the mean of the accumulated values, NaN when there are none.
func (a *acc) mean() float64 {
	if a.n == 0 {
		return math.NaN()
	}
	return a.sum / float64(a.n)
}

// rms returns the square root of the mean of the accumulated squares.
func (a *acc) rms() float64 { return math.Sqrt(a.mean()) }

type harmAcc struct {
	rms acc
	ph  complex128 // Σ RMS·e^{jφ} of the windows with an angle
	nph int
}

type chanAcc struct {
	rms, dc, dc2 acc // rms: squares; dc: mean; dc2: mean of dc² (for THD/TDD)
	h            []harmAcc
	gen          [quantity.NumChannel]genAcc // quantities the table's rule aggregates alone
}

// genAcc accumulates one quantity by its table rule (Mean, RMS2 or Max),
// skipping null and infinite window values.
type genAcc struct {
	sum, max float64
	n        int
}

func (g *genAcc) add(rule quantity.Agg, x float64) {
	if !finite(x) {
		return
	}
	switch rule {
	case quantity.RMS2:
		g.sum += x * x
	case quantity.Max:
		if g.n == 0 || x > g.max {
			g.max = x
		}
	default:
		g.sum += x
	}
	g.n++
}

func (g *genAcc) result(rule quantity.Agg) float64 {
	switch {
	case g.n == 0:
		return Null()
	case rule == quantity.RMS2:
		return math.Sqrt(g.sum / float64(g.n))
	case rule == quantity.Max:
		return g.max
	}
	return g.sum / float64(g.n)
}

type phaseAcc struct {
	p, p1, q1 acc
	pfP, pfS  float64 // Σp and Σs over the windows where both are non-null
	pfN       int
}

type totalAcc struct {
	p, q1, ve, ie, se1, p1p, q1p, dpf acc // ve, ie: squares
	pfP, pfS                          float64
	pfN                               int
}

type seqAcc struct{ pos, neg, zero acc } // squares

// Aggregator combines window records (200 ms, or stored 10-min records for
// 2 h values) into one interval record following DESIGN's aggregation
// table. Every added record counts once, whatever its Samples or DurationS:
// IEC 61000-4-30 aggregates its 10/12-cycle (and 10-min) values with equal
// weight, so a slightly longer window (a lower line frequency) or a partial
// 10-min record is not weighted more or less. An Aggregator is not safe for
// concurrent use.
type Aggregator struct {
	s        *Setup
	n        int
	samples  uint64
	dur      float64
	flags    Flags
	freq     acc
	freq10   acc
	ch       []chanAcc
	ph       []phaseAcc
	tot      totalAcc
	seqV     []seqAcc
	seqI     []seqAcc
	circ     []*Aggregator // per Setup.Circuits
	hasSeqV  bool
	hasSeqI  bool
	orderIdx [MaxOrder + 1]int // order → index in Setup.Orders, −1 when absent
}

// NewAggregator returns an empty Aggregator for records made for s.
func NewAggregator(s *Setup) *Aggregator {
	a := &Aggregator{s: s, ch: make([]chanAcc, len(s.Channels)), ph: make([]phaseAcc, len(s.Pairs))}
	for i := range a.ch {
		a.ch[i].h = make([]harmAcc, len(s.Orders))
	}
	for i := range a.orderIdx {
		a.orderIdx[i] = -1
	}
	for k, h := range s.Orders {
		if h >= 0 && h <= MaxOrder {
			a.orderIdx[h] = k
		}
	}
	a.hasSeqV, a.hasSeqI = s.threeV(), s.threeI()
	for _, c := range s.Circuits {
		a.circ = append(a.circ, NewAggregator(c.Sub))
	}
	if a.hasSeqV {
		a.seqV = make([]seqAcc, len(s.Orders))
	}
	if a.hasSeqI {
		a.seqI = make([]seqAcc, len(s.Orders))
	}
	return a
}

// Count returns the number of records added since the last Reset.
func (a *Aggregator) Count() int { return a.n }

// Reset empties the Aggregator, keeping its buffers.
func (a *Aggregator) Reset() {
	a.n, a.samples, a.dur, a.flags = 0, 0, 0, 0
	a.freq, a.freq10 = acc{}, acc{}
	for i := range a.ch {
		c := &a.ch[i]
		c.rms, c.dc, c.dc2 = acc{}, acc{}, acc{}
		clear(c.h)
		c.gen = [quantity.NumChannel]genAcc{}
	}
	clear(a.ph)
	a.tot = totalAcc{}
	clear(a.seqV)
	clear(a.seqI)
	for _, c := range a.circ {
		c.Reset()
	}
}

// hIdx returns the index in Setup.Orders of harmonic entry k of a record
// whose H holds order h (normally k itself), −1 when not configured.
func (a *Aggregator) hIdx(k, h int) int {
	if k < len(a.s.Orders) && a.s.Orders[k] == h {
		return k
	}
	if h < 0 || h > MaxOrder {
		return -1
	}
	return a.orderIdx[h]
}

// Add adds one record. Records of other shapes are matched by channel index
// and harmonic order; entries the Setup does not have are ignored.
func (a *Aggregator) Add(r *Record) {
	a.n++
	if r.Interval != Int200ms || r.Flags&FlagGap == 0 {
		a.samples += r.Samples // only whole windows count (DESIGN "Sources": gaps)
	}
	if d := r.DurationS; d > 0 && !math.IsInf(d, 0) {
		a.dur += d
	}
	a.flags |= r.Flags
	a.freq.add(r.FreqHz)
	if r.HasFreq10s {
		a.freq10.add(r.Freq10sHz)
	}
	for i := range min(len(a.ch), len(r.Channels)) {
		c, v := &a.ch[i], &r.Channels[i]
		c.rms.addSq(v.RMS)
		c.dc.add(v.DC)
		c.dc2.addSq(v.DC)
		for id := range quantity.NumChannel {
			if rule := quantity.Channel(id).Agg; rule.Generic() {
				c.gen[id].add(rule, *v.Field(id))
			}
		}
		for k := range v.H {
			x := &v.H[k]
			j := a.hIdx(k, x.H)
			if j < 0 {
				continue
			}
			h := &c.h[j]
			h.rms.addSq(x.RMS)
			if !IsNull(x.PhaseDeg) && !IsNull(x.RMS) && !math.IsInf(x.PhaseDeg, 0) && !math.IsInf(x.RMS, 0) {
				h.ph += cmplx.Rect(x.RMS, x.PhaseDeg*math.Pi/180)
				h.nph++
			}
		}
	}
	for i := range min(len(a.ph), len(r.Phases)) {
		p, v := &a.ph[i], &r.Phases[i]
		p.p.add(v.P)
		p.p1.add(v.P1)
		p.q1.add(v.Q1)
		if finite(v.P) && finite(v.S) {
			p.pfP += v.P
			p.pfS += v.S
			p.pfN++
		}
	}
	if a.s.HasTotal() {
		t, v := &a.tot, &r.Total
		t.p.add(v.P)
		t.q1.add(v.Q1)
		t.ve.addSq(v.Ve)
		t.ie.addSq(v.Ie)
		t.se1.add(v.Se1)
		t.p1p.add(v.P1Pos)
		t.q1p.add(v.Q1Pos)
		t.dpf.add(v.DPF)
		if finite(v.P) && finite(v.Se) {
			t.pfP += v.P
			t.pfS += v.Se
			t.pfN++
		}
	}
	addSeq(a.seqV, r.SeqV)
	addSeq(a.seqI, r.SeqI)
	for k := range min(len(a.circ), len(r.Circuits)) {
		if cr := r.Circuits[k].Rec; cr != nil {
			a.circ[k].Add(cr)
		}
	}
}

func addSeq(dst []seqAcc, src []Seq) {
	for k := range min(len(dst), len(src)) {
		dst[k].pos.addSq(src[k].Pos)
		dst[k].neg.addSq(src[k].Neg)
		dst[k].zero.addSq(src[k].Zero)
	}
}

func finite(x float64) bool { return !math.IsNaN(x) && !math.IsInf(x, 0) }

// agg carries one Result call's flags.
type agg struct{ flags Flags }

// def returns x, or Null with FlagUndefined when x is not finite.
func (g *agg) def(x float64) float64 {
	if finite(x) {
		return x
	}
	g.flags |= FlagUndefined
	return Null()
}

// keep returns x, or Null without a flag: a value that is null because
// every window's value was null (those windows carry their own flags).
func keep(x float64) float64 {
	if finite(x) {
		return x
	}
	return Null()
}

// Result writes the aggregate of the records added so far into out (sized
// by NewRecord; re-sized once otherwise). The caller sets Interval and
// Start. Rules, per key (DESIGN "Aggregation"):
//
//   - Samples, DurationS: sums, except that a 200 ms window flagged gap
//     adds no samples (only whole windows count). Flags: union of the records' flags, plus
//     undefined when a recomputed value falls below its near-zero floor.
//   - FreqHz: mean. Freq10sHz: mean of the 10 s values present; HasFreq10s
//     when any record had one.
//   - rms, harmonic rms, sequence magnitudes, total Ve and Ie: square root
//     of the mean of squares (IEC 61000-4-30 aggregation).
//   - dc, p_w, p1_w, q_var, total se1_va (wye) and the positive-sequence
//     P1⁺, Q1⁺: mean.
//   - thd_pct, thd_h50_pct, tdd_*, pct, pct_il: recomputed from the
//     aggregated magnitudes: thd = sqrt(X² − X0² − X1²)/X1 with X², X0²
//     (mean of dc²) and X1² all means of squares, so the result is the
//     RMS of the windows' distortion content over the RMS of their
//     fundamentals.
//   - phase s_va = V·I, s1_va = V1·I1, sn, di, dv, sh: recomputed from the
//     aggregated V, I, V1, I1. Total s_va: Σ of the phases' aggregated S;
//     se_va: 3·Ve·Ie (wye), else = s_va; se1_va: mean (wye), else Σ S1.
//   - pf: Σp/Σs over the windows where both are non-null (total: Σp/Σse).
//   - dpf: P1/sqrt(P1² + Q1²) from the aggregated (mean) P1 and Q1; the
//     total's from P1⁺ and Q1⁺ (wye with three pairs) or ΣP1 and ΣQ1;
//     when no record carries P1⁺ (a store that did not keep it), the mean
//     of the windows' total dpf.
//   - phase_deg: angle of the magnitude-weighted circular mean Σ RMS·e^{jφ}
//     of the windows with an angle; null when the aggregated component is
//     below 0.1 % of its fundamental.
//   - unbalance: 100·Neg/Pos of the aggregated fundamental sequence
//     magnitudes.
//
// A key with no non-null window value is null. With no record added every
// value is null.
func (a *Aggregator) Result(out *Record) {
	s := a.s
	shape(s, out)
	g := agg{}
	out.Samples, out.DurationS = a.samples, a.dur
	out.FreqHz = keep(a.freq.mean())
	out.HasFreq10s = a.freq10.n > 0
	out.Freq10sHz = keep(a.freq10.mean())
	if a.n == 0 {
		nullRecord(out)
		out.Flags = 0
		return
	}
	for i := range out.Channels {
		a.channel(&g, i, &out.Channels[i])
	}
	for i := range out.Phases {
		a.phase(&g, i, &out.Phases[i])
	}
	a.total(&g, out)
	out.UnbV, out.UnbI = Null(), Null()
	if a.hasSeqV {
		out.UnbV = resultSeq(&g, out.SeqV, a.seqV, s.Orders, s.floor(s.seqFloorChannel(Voltage)))
	}
	if a.hasSeqI {
		out.UnbI = resultSeq(&g, out.SeqI, a.seqI, s.Orders, s.floor(s.seqFloorChannel(Current)))
	}
	out.Flags = a.flags | g.flags
	for k := range a.circ {
		cr := out.Circuits[k].Rec
		a.circ[k].Result(cr)
		out.Flags |= cr.Flags & FlagUndefined
	}
}

func (a *Aggregator) channel(g *agg, i int, cv *ChannelValues) {
	s, c := a.s, &a.ch[i]
	if c.rms.n == 0 {
		nullChannel(cv)
		return
	}
	m := c.rms.mean()
	cv.RMS = keep(math.Sqrt(m))
	cv.DC = keep(c.dc.mean())
	for id := range quantity.NumChannel {
		if rule := quantity.Channel(id).Agg; rule.Generic() {
			*cv.Field(id) = keep(c.gen[id].result(rule))
		}
	}
	x1 := c.h[0].rms.rms()
	fundOK := x1 >= s.floor(i)
	rest := max(0, m-c.dc2.mean()-x1*x1)
	var h50 float64
	for k := 1; k < len(c.h); k++ {
		if c.h[k].rms.n > 0 {
			h50 += c.h[k].rms.mean()
		}
	}
	cv.THDH50Pct, cv.TDDPct, cv.TDDH50Pct = Null(), Null(), Null()
	if fundOK {
		cv.THDPct = g.def(100 * math.Sqrt(rest) / x1)
		if s.AllOrders {
			cv.THDH50Pct = g.def(100 * math.Sqrt(h50) / x1)
		}
	} else {
		cv.THDPct = Null()
		if !s.naturalFloor(i) {
			cv.THDPct = g.def(Null())
		}
		if s.AllOrders {
			cv.THDH50Pct = Null()
		}
	}
	il := s.IL(i)
	if il > 0 {
		cv.TDDPct = keep(100 * math.Sqrt(rest) / il)
		if s.AllOrders {
			cv.TDDH50Pct = keep(100 * math.Sqrt(h50) / il)
		}
	}
	for k := range cv.H {
		h, ha := &cv.H[k], &c.h[k]
		h.H = s.Orders[k]
		r := ha.rms.rms()
		h.RMS = keep(r)
		h.Pct = Null()
		if fundOK {
			h.Pct = keep(100 * r / x1)
		}
		h.PctIL = Null()
		if il > 0 {
			h.PctIL = keep(100 * r / il)
		}
		h.PhaseDeg = Null()
		if fundOK && ha.nph > 0 && ha.ph != 0 && r >= phaseFrac*x1 {
			h.PhaseDeg = keep(wrapDeg(cmplx.Phase(ha.ph)))
		}
	}
}

func (a *Aggregator) phase(g *agg, i int, pv *PhaseValues) {
	s, p := a.s, &a.ph[i]
	pr := s.Pairs[i]
	pv.Phase = pr.Phase
	cv, ci := &a.ch[pr.V], &a.ch[pr.I]
	v, in := cv.rms.rms(), ci.rms.rms()
	v1, i1 := cv.h[0].rms.rms(), ci.h[0].rms.rms()
	pv.P = keep(p.p.mean())
	pv.P1 = keep(p.p1.mean())
	pv.Q1 = keep(p.q1.mean())
	S, S1 := v*in, v1*i1
	pv.S = keep(S)
	pv.S1 = keep(S1)
	pv.SN = keep(math.Sqrt(max(0, S*S-S1*S1)))
	vh := math.Sqrt(max(0, v*v-v1*v1))
	ih := math.Sqrt(max(0, in*in-i1*i1))
	pv.DI = keep(v1 * ih)
	pv.DV = keep(vh * i1)
	pv.SH = keep(vh * ih)
	fs := s.floor(pr.V) * s.floor(pr.I)
	pv.PF = pfOf(g, p.pfP, p.pfS, p.pfN, fs)
	pv.DPF = dpfOf(g, pv.P1, pv.Q1, fs)
}

// pfOf returns Σp/Σs, null without windows, null+undefined below the floor.
func pfOf(g *agg, sp, ss float64, n int, fs float64) float64 {
	if n == 0 {
		return Null()
	}
	if !(ss >= float64(n)*fs) {
		return g.def(Null())
	}
	return g.def(clamp1(sp / ss))
}

// dpfOf returns P1/sqrt(P1² + Q1²), null when either is null,
// null+undefined below the floor.
func dpfOf(g *agg, p1, q1, fs float64) float64 {
	if IsNull(p1) || IsNull(q1) {
		return Null()
	}
	s1 := math.Hypot(p1, q1)
	if !(s1 >= fs) {
		return g.def(Null())
	}
	return g.def(clamp1(p1 / s1))
}

func (a *Aggregator) total(g *agg, out *Record) {
	s, t, ta := a.s, &out.Total, &a.tot
	if !s.HasTotal() {
		nullTotal(t)
		return
	}
	if s.Wiring == Delta {
		a.deltaTotal(g, t)
		return
	}
	var sa, s1, p1, q1, fs float64
	for i := range out.Phases {
		ph := &out.Phases[i]
		sa += ph.S
		s1 += ph.S1
		p1 += ph.P1
		q1 += ph.Q1
		fs += s.floor(s.Pairs[i].V) * s.floor(s.Pairs[i].I)
	}
	t.P = keep(ta.p.mean())
	t.Q1 = keep(ta.q1.mean())
	t.S = keep(sa)
	t.Ve = keep(ta.ve.rms())
	t.Ie = keep(ta.ie.rms())
	t.P1Pos = keep(ta.p1p.mean())
	t.Q1Pos = keep(ta.q1p.mean())
	t.PF = pfOf(g, ta.pfP, ta.pfS, ta.pfN, fs)
	if s.Wiring == Wye && len(out.Phases) == 3 {
		t.Se = keep(3 * t.Ve * t.Ie)
		t.Se1 = keep(ta.se1.mean())
		t.DPF = a.posDPF(g, t, fs)
		return
	}
	t.Se = keep(sa)
	t.Se1 = keep(s1)
	t.DPF = dpfOf(g, keep(p1), keep(q1), fs)
}

// posDPF returns the total dpf from the aggregated P1⁺ and Q1⁺. It is
// all-or-nothing: P1⁺ and Q1⁺ from only some inputs (records stored before
// they were kept) would weight those few alone, so then it is the mean of
// the windows' dpf.
func (a *Aggregator) posDPF(g *agg, t *TotalValues, fs float64) float64 {
	ta := &a.tot
	if ta.p1p.n > 0 && ta.p1p.n == ta.dpf.n && ta.q1p.n == ta.dpf.n {
		return dpfOf(g, t.P1Pos, t.Q1Pos, fs)
	}
	return keep(ta.dpf.mean())
}

// deltaTotal aggregates three-wire totals: P, Q1, Se1, P1⁺, Q1⁺ means; Ve,
// Ie quadratic means; Se = 3·Ve·Ie; pf Σp/Σse; s_va does not apply (null).
func (a *Aggregator) deltaTotal(g *agg, t *TotalValues) {
	s, ta := a.s, &a.tot
	var fs float64
	for _, e := range s.Products {
		fs += s.floor(e.V) * s.floor(e.I)
	}
	t.P = keep(ta.p.mean())
	t.Q1 = keep(ta.q1.mean())
	t.S = Null()
	t.Ve = keep(ta.ve.rms())
	t.Ie = keep(ta.ie.rms())
	t.P1Pos = keep(ta.p1p.mean())
	t.Q1Pos = keep(ta.q1p.mean())
	t.PF = pfOf(g, ta.pfP, ta.pfS, ta.pfN, fs)
	t.Se = keep(3 * t.Ve * t.Ie)
	t.Se1 = keep(ta.se1.mean())
	t.DPF = a.posDPF(g, t, fs)
}

// resultSeq writes aggregated sequence magnitudes and returns the
// recomputed fundamental unbalance.
func resultSeq(g *agg, q []Seq, sa []seqAcc, orders []int, floor float64) float64 {
	for k := range q {
		q[k].H = orders[k]
		q[k].Pos = keep(sa[k].pos.rms())
		q[k].Neg = keep(sa[k].neg.rms())
		q[k].Zero = keep(sa[k].zero.rms())
	}
	if len(q) == 0 || sa[0].pos.n == 0 || sa[0].neg.n == 0 {
		return Null()
	}
	if !(q[0].Pos >= floor) {
		return g.def(Null())
	}
	return g.def(100 * q[0].Neg / q[0].Pos)
}
