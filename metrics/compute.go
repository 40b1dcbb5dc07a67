package metrics

import (
	"math"
	"math/cmplx"

	"github.com/gridloupe/gridloupe/metrics/quantity"
)

// Fractions and constants of DESIGN's "Conventions of measurement".
const (
	// phaseFrac: a component below this fraction of its own fundamental has
	// no meaningful angle; its phase_deg is null (without the undefined flag).
	phaseFrac = 0.001
)

// aOp is the Fortescue operator a = e^{j120°}; aOp2 = a².
var (
	aOp  = complex(-0.5, math.Sqrt(3)/2)
	aOp2 = complex(-0.5, -math.Sqrt(3)/2)
)

// window carries one Compute call's state on the stack.
type window struct {
	s     *Setup
	in    *Input
	flags Flags
	w     float64 // 2π·OmegaHz for delay correction; 0 when unusable
}

// def returns x, or Null with FlagUndefined when x is NaN or ±Inf.
func (w *window) def(x float64) float64 {
	if math.IsNaN(x) || math.IsInf(x, 0) {
		w.flags |= FlagUndefined
		return Null()
	}
	return x
}

// undef returns Null and sets FlagUndefined: a value null for a floor reason.
func (w *window) undef() float64 {
	w.flags |= FlagUndefined
	return Null()
}

// floorNull is undef, except for a quantity undefined by nature (natural):
// Null without the flag, so the flag keeps its meaning.
func (w *window) floorNull(natural bool) float64 {
	if natural {
		return Null()
	}
	return w.undef()
}

// naturalFloor reports whether channel ci's fundamental is near zero by
// nature: a neutral current, which in a balanced system carries little
// fundamental (its distortion and harmonic percentages are then null
// without the undefined flag; README "What is measured").
func (s *Setup) naturalFloor(ci int) bool {
	c := &s.Channels[ci]
	return c.Kind == Current && c.Phase == 'n'
}

// bad reports whether channel ci's sums cannot be used: flagged Bad by the
// pipeline, no samples, or sums of the wrong shape.
func (w *window) bad(ci int) bool {
	if ci < 0 || ci >= len(w.in.Ch) {
		return true
	}
	c := &w.in.Ch[ci]
	return c.Bad || c.N <= 0 || len(c.Phasors) < len(w.s.Orders)
}

// ph returns channel ci's phasor of order index k after delay correction.
// DelayS is the time τ by which the channel's sample lags the frame instant
// (positive: the sample is taken late). A late sample reads x(t + τ), which
// shows order h at a phase h·ω·τ too high, so it is rotated by −h·ω·τ. A
// sensor whose output lags its input by τ reads x(t − τ): its DelayS is −τ.
func (w *window) ph(ci, k int) complex128 {
	x := w.in.Ch[ci].Phasors[k]
	d := w.s.Channels[ci].DelayS
	if d == 0 || w.w == 0 {
		return x
	}
	return x * cmplx.Rect(1, -float64(w.s.Orders[k])*w.w*d)
}

// ms returns channel ci's mean square Σx²/N and mean Σx/N.
func (w *window) ms(ci int) (ms, dc float64) {
	c := &w.in.Ch[ci]
	n := float64(c.N)
	return c.SumSq / n, c.Sum / n
}

// rest returns the part of channel ci's mean square not carried by DC and
// the computed orders (interharmonics, noise, orders not computed), ≥ 0.
func (w *window) rest(ci int) float64 {
	m, dc := w.ms(ci)
	r := m - dc*dc
	for _, x := range w.in.Ch[ci].Phasors[:len(w.s.Orders)] {
		r -= sq(x)
	}
	return max(0, r)
}

func sq(x complex128) float64 { return real(x)*real(x) + imag(x)*imag(x) }

// Compute fills every value field of out from one window's sums: channel
// values, phase powers, totals, sequence components and unbalance, FreqHz,
// and Flags (overwritten; the caller ORs its own flags afterwards: partial,
// gap, event, clock_unsynced). It leaves Interval, Start, DurationS and
// Samples to the caller and clears HasFreq10s. s must come from NewSetup;
// out should come from NewRecord(s) (otherwise it is re-sized once).
// Compute does not allocate.
//
// Conventions (DESIGN "Conventions of measurement"): phasors are RMS,
// cosine-referenced; each is first delay-corrected (see Channel.DelayS);
// phase_deg of order h is θh − h·θ1(ref) wrapped to (−180, 180]. A value
// undefined for a floor reason is Null and sets FlagUndefined; values of a
// Bad channel (and every value that needs it) are Null with FlagBadSample;
// a value that does not apply (pct_il without IL, h50 values without all
// orders, tdd for voltages, UnbV without three voltages) is Null and sets
// no flag. Without lock, or with the reference fundamental below its floor,
// every phase_deg is Null and FlagNoLock is set (the latter case also sets
// FlagUndefined).
func Compute(s *Setup, in *Input, out *Record) {
	shape(s, out)
	w := window{s: s, in: in}
	out.HasFreq10s = false
	out.Freq10sHz = Null()
	if !s.valid {
		nullRecord(out)
		out.FreqHz = Null()
		out.Flags = FlagUndefined
		return
	}
	if f := in.OmegaHz; f > 0 && !math.IsInf(f, 0) {
		w.w = 2 * math.Pi * f
	}
	out.FreqHz = Null()
	if in.Lock {
		out.FreqHz = w.def(in.FreqHz)
	}

	// Angle reference: the corrected fundamental of the reference channel.
	ref := s.Reference
	refOK := in.Lock && !w.bad(ref)
	var thRef float64
	if !in.Lock {
		w.flags |= FlagNoLock
	} else if refOK {
		v1 := w.ph(ref, 0)
		if !(cmplx.Abs(v1) >= s.floor(ref)) {
			refOK = false
			w.flags |= FlagNoLock | FlagUndefined
		}
		thRef = cmplx.Phase(v1)
	}

	for ci := range s.Channels {
		w.channel(ci, &out.Channels[ci], refOK, thRef)
	}
	if s.Wiring == Delta {
		w.delta(out)
		out.Flags = w.flags
		return
	}
	for pi, p := range s.Pairs {
		w.pair(pi, p, &out.Phases[pi])
	}
	w.total(out)
	w.sequence(out)
	out.Flags = w.flags
	if len(s.Circuits) > 0 {
		computeCircuits(s, in, out)
	}
}

// channel fills one channel's values.
func (w *window) channel(ci int, cv *ChannelValues, refOK bool, thRef float64) {
	s := w.s
	if ci < len(w.in.Ch) && w.in.Ch[ci].Clipped {
		w.flags |= FlagClipped
	}
	if w.bad(ci) {
		w.flags |= FlagBadSample
		nullChannel(cv)
		return
	}
	ph := w.in.Ch[ci].Phasors
	m, dc := w.ms(ci)
	cv.RMS = w.def(math.Sqrt(m))
	cv.DC = w.def(dc)
	cv.CrestFactor = w.crest(ci, math.Sqrt(m))

	x1 := cmplx.Abs(ph[0])
	fundOK := x1 >= s.floor(ci)
	var h50 float64 // Σ |X_h|², h = 2..50
	for k := 1; k < len(s.Orders); k++ {
		h50 += sq(ph[k])
	}
	// Everything but DC and the fundamental: X² − X0² − X1² (THD-F).
	rest := max(0, m-dc*dc-x1*x1)
	if fundOK {
		cv.THDPct = w.def(100 * math.Sqrt(rest) / x1)
		cv.THDH50Pct = Null()
		if s.AllOrders {
			cv.THDH50Pct = w.def(100 * math.Sqrt(h50) / x1)
		}
	} else {
		nat := s.naturalFloor(ci)
		cv.THDPct = w.floorNull(nat)
		cv.THDH50Pct = Null()
		if s.AllOrders {
			cv.THDH50Pct = w.floorNull(nat)
		}
	}
	// TDD (IEEE 519): the same distortion relative to IL.
	il := s.IL(ci)
	cv.TDDPct, cv.TDDH50Pct = Null(), Null()
	if il > 0 {
		cv.TDDPct = w.def(100 * math.Sqrt(rest) / il)
		if s.AllOrders {
			cv.TDDH50Pct = w.def(100 * math.Sqrt(h50) / il)
		}
	}
	for k := range s.Orders {
		h := &cv.H[k]
		h.H = s.Orders[k]
		x := w.ph(ci, k)
		r := cmplx.Abs(x)
		h.RMS = w.def(r)
		if fundOK {
			h.Pct = w.def(100 * r / x1)
		} else {
			h.Pct = w.floorNull(s.naturalFloor(ci))
		}
		h.PctIL = Null()
		if il > 0 {
			h.PctIL = w.def(100 * r / il)
		}
		h.PhaseDeg = Null()
		if refOK && fundOK && r > 0 && r >= phaseFrac*x1 {
			h.PhaseDeg = w.def(wrapDeg(cmplx.Phase(x) - float64(h.H)*thRef))
		}
	}
}

// wrapDeg converts radians to degrees wrapped to (−180, 180].
func wrapDeg(rad float64) float64 {
	d := math.Remainder(rad*180/math.Pi, 360)
	if d <= -180 {
		d += 360
	}
	return d
}

// clamp1 keeps a power factor within [−1, 1] against rounding.
func clamp1(x float64) float64 { return max(-1, min(1, x)) }

// pair fills one phase's powers (IEEE 1459-2010 single-phase terms, using
// V² = V1² + VH² and I² = I1² + IH², so VH and IH include DC).
func (w *window) pair(pi int, p Pair, pv *PhaseValues) {
	pv.Phase = p.Phase
	if w.bad(p.V) || w.bad(p.I) {
		nullPhase(pv)
		return
	}
	s := w.s
	vm, _ := w.ms(p.V)
	im, _ := w.ms(p.I)
	v, i := math.Sqrt(vm), math.Sqrt(im)
	v1, i1 := w.ph(p.V, 0), w.ph(p.I, 0)

	pv.P = w.def(w.productP(pi, p))
	c1 := v1 * cmplx.Conj(i1) // V1·I1*: real P1, imaginary Q1 (+ when I lags V)
	pv.P1 = w.def(real(c1))
	pv.Q1 = w.def(imag(c1))
	av1, ai1 := cmplx.Abs(v1), cmplx.Abs(i1)
	S, S1 := v*i, av1*ai1
	vh := math.Sqrt(max(0, vm-av1*av1))
	ih := math.Sqrt(max(0, im-ai1*ai1))
	pv.S = w.def(S)
	pv.S1 = w.def(S1)
	pv.SN = w.def(math.Sqrt(max(0, S*S-S1*S1)))
	pv.DI = w.def(av1 * ih)
	pv.DV = w.def(vh * ai1)
	pv.SH = w.def(vh * ih)
	fs := s.floor(p.V) * s.floor(p.I)
	if S >= fs {
		pv.PF = w.def(clamp1(pv.P / S))
	} else {
		pv.PF = w.undef()
	}
	if S1 >= fs {
		pv.DPF = w.def(clamp1(real(c1) / S1)) // cos(θv1 − θi1), sign of P1
	} else {
		pv.DPF = w.undef()
	}
}

// productP returns the mean of product k (Setup.Products[k], channels p.V
// and p.I) over the window: P from the samples. The sample-domain sum
// cannot be rotated, so a delay correction is applied to it as the
// difference it makes to the computed orders' active powers:
// Σ_h Re(Vh·Ih*)_corrected − Re(Vh·Ih*)_raw. Power carried outside the
// computed orders stays uncorrected. Null when the input has no such sum.
func (w *window) productP(k int, p Pair) float64 {
	if k >= len(w.in.SumVI) {
		return Null()
	}
	s := w.s
	P := w.in.SumVI[k] / float64(w.in.Ch[p.V].N)
	if s.Channels[p.V].DelayS != s.Channels[p.I].DelayS && w.w != 0 {
		rv, ri := w.in.Ch[p.V].Phasors, w.in.Ch[p.I].Phasors
		for h := range s.Orders {
			P += real(w.ph(p.V, h)*cmplx.Conj(w.ph(p.I, h))) - real(rv[h]*cmplx.Conj(ri[h]))
		}
	}
	return P
}

// total fills the totals. Single phase: the phase itself, Se = S. Wye with
// three pairs: IEEE 1459-2010 four-wire effective quantities and the
// positive-sequence DPF. Wye with fewer pairs: sums of what exists, Se = S,
// Ve and Ie the quadratic means of the phases present (a pragmatic choice,
// not a 1459 definition), DPF = ΣP1/ΣS1.
func (w *window) total(out *Record) {
	t := &out.Total
	if len(out.Phases) == 0 {
		nullTotal(t)
		return
	}
	var p, p1, q1, sa, s1, v2, i2, fs float64
	for k := range out.Phases {
		ph := &out.Phases[k]
		pr := w.s.Pairs[k]
		p += ph.P
		p1 += ph.P1
		q1 += ph.Q1
		sa += ph.S
		s1 += ph.S1
		fs += w.s.floor(pr.V) * w.s.floor(pr.I)
		if !w.bad(pr.V) && !w.bad(pr.I) {
			vm, _ := w.ms(pr.V)
			im, _ := w.ms(pr.I)
			v2 += vm
			i2 += im
		} else {
			v2, i2 = Null(), Null()
		}
	}
	// NaN (a null phase) propagates into the sums; keep them null, without
	// a second flag: the phase's null already set its flag.
	t.P, t.Q1, t.S = p, q1, sa
	t.P1Pos, t.Q1Pos = Null(), Null()
	if w.s.Wiring == Wye && len(out.Phases) == 3 {
		w.wye(t, p, fs)
		return
	}
	n := float64(len(out.Phases))
	t.Se, t.Se1 = sa, s1
	t.Ve, t.Ie = math.Sqrt(v2/n), math.Sqrt(i2/n)
	t.PF, t.DPF = Null(), Null()
	if len(out.Phases) == 1 {
		t.PF, t.DPF = out.Phases[0].PF, out.Phases[0].DPF
		return
	}
	if IsNull(sa) || IsNull(p) {
		// stays null
	} else if sa >= fs {
		t.PF = w.def(clamp1(p / sa))
	} else {
		t.PF = w.undef()
	}
	if IsNull(s1) || IsNull(p1) {
		// stays null
	} else if s1 >= fs {
		t.DPF = w.def(clamp1(p1 / s1))
	} else {
		t.DPF = w.undef()
	}
}

// wye fills the IEEE 1459-2010 four-wire effective quantities:
//
//	Ie = sqrt((Ia² + Ib² + Ic² + In²)/3)
//	Ve = sqrt((3(Va² + Vb² + Vc²) + Vab² + Vbc² + Vca²)/18)
//	Se = 3·Ve·Ie, Se1 = 3·Ve1·Ie1 (the same from fundamentals), PF = P/Se,
//	DPF = P1⁺/S1⁺ with P1⁺ = 3·Re(V1⁺·I1⁺*), S1⁺ = 3·|V1⁺|·|I1⁺|.
//
// Line-to-line and computed-neutral values are not sampled; they are built
// from the phasors of every computed order plus DC, plus each phase's
// remainder R (its mean square not carried by DC or computed orders: orders
// above 50 or not configured, interharmonics, noise). The remainder is taken
// to be a balanced (positive- or negative-sequence) set, as the
// characteristic harmonics of balanced converters above the 50th are: such
// a set adds 3/2·(Ra + Rb) to Vab² and nothing to the neutral:
//
//	Vab² = Σ_h |Va,h − Vb,h|² + (dca − dcb)² + 1.5·(Ra + Rb)
//	In²  = Σ_h |Ia,h + Ib,h + Ic,h|² + (dca + dcb + dcc)²
//
// so balanced input gives Ve = V_LN and In = 0 exactly. Zero-sequence
// content outside the computed orders (triplens left out of a short order
// list, uncorrelated noise) is therefore missing from a computed In and
// over-weighted by 1.5 in Vab²; configure all orders, or a neutral channel,
// where that matters. A measured neutral channel is used when configured;
// otherwise In is computed and FlagInComputed is set.
func (w *window) wye(t *TotalValues, p, fs float64) {
	s := w.s
	vi, ii := s.VIdx, s.IIdx
	for k := range 3 {
		if w.bad(vi[k]) || w.bad(ii[k]) {
			t.Se, t.Se1, t.Ve, t.Ie, t.PF, t.DPF = Null(), Null(), Null(), Null(), Null(), Null()
			return
		}
	}
	var vsum, vllsum, v1sum, v1llsum, isum, i1sum float64
	for k := range 3 {
		a, b := vi[k], vi[(k+1)%3]
		vm, dca := w.ms(a)
		_, dcb := w.ms(b)
		vsum += vm
		v1sum += sq(w.ph(a, 0))
		ll := (dca-dcb)*(dca-dcb) + 1.5*(w.rest(a)+w.rest(b))
		for h := range s.Orders {
			ll += sq(w.ph(a, h) - w.ph(b, h))
		}
		vllsum += ll
		v1llsum += sq(w.ph(a, 0) - w.ph(b, 0))
		im, _ := w.ms(ii[k])
		isum += im
		i1sum += sq(w.ph(ii[k], 0))
	}
	var in2, in12 float64
	switch n := s.Neutral; {
	case n >= 0 && w.bad(n):
		in2, in12 = Null(), Null() // flagged bad_sample by channel()
	case n >= 0:
		in2, _ = w.ms(n)
		in12 = sq(w.ph(n, 0))
	default:
		w.flags |= FlagInComputed
		var dc float64
		for k := range 3 {
			_, d := w.ms(ii[k])
			dc += d
		}
		in2 += dc * dc
		for h := range s.Orders {
			x := w.ph(ii[0], h) + w.ph(ii[1], h) + w.ph(ii[2], h)
			in2 += sq(x)
			if h == 0 {
				in12 = sq(x)
			}
		}
	}
	ve := math.Sqrt((3*vsum + vllsum) / 18)
	ve1 := math.Sqrt((3*v1sum + v1llsum) / 18)
	ie := math.Sqrt((isum + in2) / 3)
	ie1 := math.Sqrt((i1sum + in12) / 3)
	t.Ve = w.def(ve)
	t.Ie = defNull(w, ie)
	t.Se = defNull(w, 3*ve*ie)
	t.Se1 = defNull(w, 3*ve1*ie1)
	t.PF = Null()
	if !IsNull(t.Se) && !IsNull(p) {
		if t.Se >= fs {
			t.PF = w.def(clamp1(p / t.Se))
		} else {
			t.PF = w.undef()
		}
	}
	vp := (w.ph(vi[0], 0) + aOp*w.ph(vi[1], 0) + aOp2*w.ph(vi[2], 0)) / 3
	ip := (w.ph(ii[0], 0) + aOp*w.ph(ii[1], 0) + aOp2*w.ph(ii[2], 0)) / 3
	c := 3 * vp * cmplx.Conj(ip)
	t.P1Pos = w.def(real(c))
	t.Q1Pos = w.def(imag(c))
	s1p := 3 * cmplx.Abs(vp) * cmplx.Abs(ip)
	if s1p >= fs {
		t.DPF = w.def(clamp1(real(c) / s1p))
	} else {
		t.DPF = w.undef()
	}
}

// defNull keeps a NaN that came from a bad neutral channel null without a
// second flag, and sanitizes anything else like def.
func defNull(w *window, x float64) float64 {
	if IsNull(x) && w.s.Neutral >= 0 && w.bad(w.s.Neutral) {
		return Null()
	}
	return w.def(x)
}

// fortescue returns the zero, positive and negative sequence components of
// three phase phasors, with a = e^{j120°}:
// X0 = (Xa+Xb+Xc)/3, X1 = (Xa + a·Xb + a²·Xc)/3, X2 = (Xa + a²·Xb + a·Xc)/3.
func fortescue(xa, xb, xc complex128) (zero, pos, neg complex128) {
	zero = (xa + xb + xc) / 3
	pos = (xa + aOp*xb + aOp2*xc) / 3
	neg = (xa + aOp2*xb + aOp*xc) / 3
	return
}

// sequence fills SeqV, SeqI, UnbV, UnbI and FlagRotationACB.
func (w *window) sequence(out *Record) {
	s := w.s
	out.UnbV, out.UnbI = Null(), Null()
	if len(out.SeqV) > 0 {
		out.UnbV = w.seq(out.SeqV, s.VIdx, true)
	}
	if len(out.SeqI) > 0 {
		out.UnbI = w.seq(out.SeqI, s.IIdx, false)
	}
}

// seq fills one set of sequence magnitudes and returns the fundamental
// unbalance 100·|X1⁻|/|X1⁺| (IEC 61000-4-30 u2 for voltages).
func (w *window) seq(q []Seq, idx [3]int, volts bool) float64 {
	if w.bad(idx[0]) || w.bad(idx[1]) || w.bad(idx[2]) {
		for k := range q {
			q[k].Pos, q[k].Neg, q[k].Zero = Null(), Null(), Null()
		}
		return Null()
	}
	for k := range q {
		q[k].H = w.s.Orders[k]
		z, p, n := fortescue(w.ph(idx[0], k), w.ph(idx[1], k), w.ph(idx[2], k))
		q[k].Pos = w.def(cmplx.Abs(p))
		q[k].Neg = w.def(cmplx.Abs(n))
		q[k].Zero = w.def(cmplx.Abs(z))
	}
	f := w.s.floor(idx[0])
	q0 := q[0]
	if volts && max(q0.Pos, q0.Neg) >= f && q0.Neg > q0.Pos && q0.Neg >= q0.Zero {
		w.flags |= FlagRotationACB
	}
	if !(q0.Pos >= f) {
		return w.undef()
	}
	return w.def(100 * q0.Neg / q0.Pos)
}

func nullChannel(cv *ChannelValues) {
	for id := range quantity.NumChannel {
		*cv.Field(id) = Null()
	}
	for k := range cv.H {
		h := &cv.H[k]
		h.RMS, h.Pct, h.PctIL, h.PhaseDeg = Null(), Null(), Null(), Null()
	}
}

func nullPhase(pv *PhaseValues) {
	pv.P, pv.P1, pv.Q1, pv.S, pv.S1, pv.SN = Null(), Null(), Null(), Null(), Null(), Null()
	pv.DI, pv.DV, pv.SH, pv.PF, pv.DPF = Null(), Null(), Null(), Null(), Null()
}

func nullTotal(t *TotalValues) {
	t.P, t.Q1, t.S, t.Se, t.Se1, t.Ve, t.Ie, t.PF, t.DPF = Null(), Null(), Null(), Null(), Null(), Null(), Null(), Null(), Null()
	t.P1Pos, t.Q1Pos = Null(), Null()
}

func nullSeq(q []Seq) {
	for k := range q {
		q[k].Pos, q[k].Neg, q[k].Zero = Null(), Null(), Null()
	}
}

// nullRecord sets every value of r to Null (not Samples, DurationS, Flags).
func nullRecord(r *Record) {
	for i := range r.Channels {
		nullChannel(&r.Channels[i])
	}
	for i := range r.Phases {
		nullPhase(&r.Phases[i])
	}
	nullTotal(&r.Total)
	nullSeq(r.SeqV)
	nullSeq(r.SeqI)
	r.UnbV, r.UnbI = Null(), Null()
	for _, c := range r.Circuits {
		if c.Rec != nil {
			nullRecord(c.Rec)
		}
	}
}
