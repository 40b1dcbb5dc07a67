package metrics

import (
	"errors"
	"fmt"
	"math"
	"math/cmplx"
)

// ErrDelta reports a three-wire hook-up the quantities cannot come from:
// one current, or two currents whose voltages do not share the phase
// without a CT.
var ErrDelta = errors.New("metrics: impossible delta hook-up")

// lineOf returns the line (0 ab, 1 bc, 2 ca) that joins phases x and y (0..2,
// distinct) and the sign of v_x − v_y against that line's own orientation:
// v_ab = v_a − v_b, v_bc = v_b − v_c, v_ca = v_c − v_a.
func lineOf(x, y int) (line int, sign float64) {
	if (y-x+3)%3 == 1 {
		return x, 1
	}
	return y, -1
}

// lineNames are the lines in LL order.
var lineNames = [3]string{"ab", "bc", "ca"}

// addDeltaChannel records channel i of a Delta setup: voltages are
// line-to-line (Phase and To two distinct phases of a, b, c), currents are
// on a, b or c (no neutral in a three-wire system).
func (s *Setup) addDeltaChannel(i int) error {
	c := &s.Channels[i]
	ph := func(b byte) int {
		if b >= 'a' && b <= 'c' {
			return int(b - 'a')
		}
		return -1
	}
	x, y := ph(c.Phase), ph(c.To)
	if c.Kind == Voltage {
		if x < 0 || y < 0 || x == y {
			return fmt.Errorf("channel %d %q: delta voltages are line-to-line (ab, bc, ca, ba, cb, ac), not %q: %w",
				i, c.Name, string([]byte{c.Phase, c.To}), ErrChannel)
		}
		l, sign := lineOf(x, y)
		if s.LL[l] >= 0 {
			return fmt.Errorf("channel %d %q: a second voltage on line %s (first: %q): %w",
				i, c.Name, lineNames[l], s.Channels[s.LL[l]].Name, ErrDuplicate)
		}
		s.LL[l], s.LLNeg[l] = i, sign < 0
		return nil
	}
	if x < 0 || c.To != 0 {
		return fmt.Errorf("channel %d %q: delta currents are on phase a, b or c (no neutral in a three-wire system), not %q: %w",
			i, c.Name, string(c.Phase), ErrChannel)
	}
	if s.IIdx[x] >= 0 {
		return fmt.Errorf("channel %d %q: current on phase %c: %w", i, c.Name, c.Phase, ErrDuplicate)
	}
	s.IIdx[x] = i
	return nil
}

// deltaElements chooses the two-wattmeter elements (Blondel's theorem: in a
// three-wire system P = Re(V_ac·I_a*) + Re(V_bc·I_b*) for any common phase,
// here c): the common phase is the one without a CT when there are two,
// else the first of b, a, c whose two lines are both measured.
func (s *Setup) deltaElements() error {
	n := count3(s.IIdx)
	switch n {
	case 0:
		return nil
	case 1:
		return fmt.Errorf("one current: a three-wire total needs two currents (the two-wattmeter hook-up) or three: %w", ErrDelta)
	}
	has := func(m int) bool { return s.LL[m] >= 0 && s.LL[(m+2)%3] >= 0 }
	common := -1
	if n == 2 {
		for m := range 3 {
			if s.IIdx[m] < 0 {
				common = m
			}
		}
		if !has(common) {
			o1, o2 := (common+1)%3, (common+2)%3
			return fmt.Errorf("currents on %c and %c need the voltages %c%c and %c%c to the phase without a CT: %w",
				'a'+o1, 'a'+o2, 'a'+o1, 'a'+common, 'a'+o2, 'a'+common, ErrDelta)
		}
	} else {
		for _, m := range [...]int{1, 0, 2} {
			if has(m) {
				common = m
				break
			}
		}
		if common < 0 {
			return fmt.Errorf("three currents need two line-to-line voltages: %w", ErrDelta)
		}
	}
	for x := range 3 {
		if x == common {
			continue
		}
		l, sign := lineOf(x, common)
		neg := (sign < 0) != s.LLNeg[l]
		s.Products = append(s.Products, Pair{Phase: byte('a' + x), V: s.LL[l], I: s.IIdx[x], Neg: neg})
	}
	return nil
}

// lineV returns line l's phasor of order index k (oriented ab, bc, ca); an
// unmeasured line is minus the sum of the other two (Kirchhoff's voltage
// law around the three lines: v_ab + v_bc + v_ca = 0).
func (w *window) lineV(l, k int) complex128 {
	if ci := w.s.LL[l]; ci >= 0 {
		x := w.ph(ci, k)
		if w.s.LLNeg[l] {
			return -x
		}
		return x
	}
	return -(w.lineV((l+1)%3, k) + w.lineV((l+2)%3, k))
}

// lineI returns phase p's current phasor of order index k; an unmeasured
// current is minus the sum of the other two (i_a + i_b + i_c = 0 without a
// neutral).
func (w *window) lineI(p, k int) complex128 {
	if ci := w.s.IIdx[p]; ci >= 0 {
		return w.ph(ci, k)
	}
	return -(w.lineI((p+1)%3, k) + w.lineI((p+2)%3, k))
}

// computedMS returns the mean square of a signal that is minus the sum of
// two measured channels a and b (signs sa, sb): from every computed order,
// the DC, and half the channels' remainders (content outside the computed
// orders is taken to be a balanced set, whose members have equal RMS; see
// window.wye for the same assumption).
func (w *window) computedMS(a, b int, sa, sb float64, phasor func(k int) complex128) float64 {
	_, da := w.ms(a)
	_, db := w.ms(b)
	dc := sa*da + sb*db
	m := dc*dc + 0.5*(w.rest(a)+w.rest(b))
	for k := range w.s.Orders {
		m += sq(phasor(k))
	}
	return m
}

// deltaMS returns the mean squares of the three lines (idx = LL) or the
// three currents (idx = IIdx), computing a missing one, and whether one was
// computed. ok is false when a needed channel is bad.
func (w *window) deltaMS(idx [3]int, neg [3]bool, phasor func(p, k int) complex128) (m [3]float64, computed, ok bool) {
	for p := range 3 {
		if idx[p] >= 0 {
			if w.bad(idx[p]) {
				return m, false, false
			}
			m[p], _ = w.ms(idx[p])
			continue
		}
		a, b := idx[(p+1)%3], idx[(p+2)%3]
		if a < 0 || b < 0 || w.bad(a) || w.bad(b) {
			return m, false, false
		}
		sa, sb := 1.0, 1.0
		if neg[(p+1)%3] {
			sa = -1
		}
		if neg[(p+2)%3] {
			sb = -1
		}
		m[p] = w.computedMS(a, b, sa, sb, func(k int) complex128 { return phasor(p, k) })
		computed = true
	}
	return m, computed, true
}

// delta fills the totals, sequences and unbalance of a three-wire record
// (no phases): P by the two-wattmeter (Blondel) method from the sample
// products, P1 and Q1 the same from the fundamentals, and IEEE 1459-2010's
// three-wire effective quantities
//
//	Ve = sqrt((Vab² + Vbc² + Vca²)/9), Ie = sqrt((Ia² + Ib² + Ic²)/3),
//	Se = 3·Ve·Ie, Se1 = 3·Ve1·Ie1, PF = P/Se, DPF = P1⁺/S1⁺,
//
// with the positive-sequence phase quantities from the line-to-line ones
// (V⁺_ab = √3·e^{j30°}·V⁺_a). s_va (an arithmetic sum of phase S) does not
// apply without phase-to-neutral voltages and stays null. A current without
// a CT is computed from the other two and sets FlagInComputed.
func (w *window) delta(out *Record) {
	s := w.s
	t := &out.Total
	nullTotal(t)
	out.UnbV, out.UnbI = Null(), Null()
	if len(out.SeqV) > 0 {
		out.UnbV = w.deltaSeq(out.SeqV, s.LL, w.lineV, true)
	}
	if len(out.SeqI) > 0 {
		out.UnbI = w.deltaSeq(out.SeqI, s.IIdx, w.lineI, false)
	}
	if !s.HasTotal() {
		return
	}
	if s.IIdx[0] < 0 || s.IIdx[1] < 0 || s.IIdx[2] < 0 {
		w.flags |= FlagInComputed
	}
	var p, q1, fs float64
	for k, e := range s.Products {
		if w.bad(e.V) || w.bad(e.I) {
			return // channel() flagged bad_sample; totals stay null
		}
		sign := 1.0
		if e.Neg {
			sign = -1
		}
		p += sign * w.productP(k, e)
		c1 := w.ph(e.V, 0) * cmplx.Conj(w.ph(e.I, 0))
		q1 += sign * imag(c1)
		fs += s.floor(e.V) * s.floor(e.I)
	}
	t.P, t.Q1 = w.def(p), w.def(q1)
	vm, _, okV := w.deltaMS(s.LL, s.LLNeg, w.lineV)
	im, _, okI := w.deltaMS(s.IIdx, [3]bool{}, w.lineI)
	if !okV || !okI {
		return
	}
	var v1, i1 float64
	for k := range 3 {
		v1 += sq(w.lineV(k, 0))
		i1 += sq(w.lineI(k, 0))
	}
	ve := math.Sqrt((vm[0] + vm[1] + vm[2]) / 9)
	ie := math.Sqrt((im[0] + im[1] + im[2]) / 3)
	ve1, ie1 := math.Sqrt(v1/9), math.Sqrt(i1/3)
	t.Ve, t.Ie = w.def(ve), w.def(ie)
	t.Se, t.Se1 = w.def(3*ve*ie), w.def(3*ve1*ie1)
	if t.Se >= fs {
		t.PF = w.def(clamp1(p / t.Se))
	} else {
		t.PF = w.undef()
	}
	_, vpLL, _ := fortescue(w.lineV(0, 0), w.lineV(1, 0), w.lineV(2, 0))
	_, ip, _ := fortescue(w.lineI(0, 0), w.lineI(1, 0), w.lineI(2, 0))
	vp := vpLL / cmplx.Rect(math.Sqrt(3), math.Pi/6)
	c := 3 * vp * cmplx.Conj(ip)
	t.P1Pos, t.Q1Pos = w.def(real(c)), w.def(imag(c))
	if s1p := 3 * cmplx.Abs(vp) * cmplx.Abs(ip); s1p >= fs {
		t.DPF = w.def(clamp1(real(c) / s1p))
	} else {
		t.DPF = w.undef()
	}
}

// deltaSeq fills one set of sequence magnitudes from the three lines
// (voltages) or phases (currents), a missing one computed, and returns the
// fundamental unbalance 100·|X1⁻|/|X1⁺|, the same ratio for line-to-line as
// for phase voltages (IEC 61000-4-30 u2). Line-to-line voltages have no
// zero sequence: Zero is 0 (encoders leave it out).
func (w *window) deltaSeq(q []Seq, idx [3]int, phasor func(p, k int) complex128, volts bool) float64 {
	first := -1
	for p := range 3 {
		if idx[p] >= 0 {
			if w.bad(idx[p]) {
				nullSeq(q)
				return Null()
			}
			if first < 0 {
				first = idx[p]
			}
		}
	}
	for k := range q {
		q[k].H = w.s.Orders[k]
		z, p, n := fortescue(phasor(0, k), phasor(1, k), phasor(2, k))
		q[k].Pos = w.def(cmplx.Abs(p))
		q[k].Neg = w.def(cmplx.Abs(n))
		q[k].Zero = w.def(cmplx.Abs(z))
		if volts {
			q[k].Zero = 0
		}
	}
	f := w.s.floor(first)
	q0 := q[0]
	if volts && max(q0.Pos, q0.Neg) >= f && q0.Neg > q0.Pos {
		w.flags |= FlagRotationACB
	}
	if !(q0.Pos >= f) {
		return w.undef()
	}
	return w.def(100 * q0.Neg / q0.Pos)
}
