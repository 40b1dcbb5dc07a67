package metrics

import (
	"errors"
	"math"
	"testing"
)

// deltaTol: whole-cycle synthetic windows and an exact DFT leave only
// float64 rounding (measured worst about 1e-11 relative); 1e-9 relative
// is the project's bound, about 100x that.
const deltaTol = 1e-9

// vll returns the line-to-line wave v_x − v_y.
func vll(x, y wave) wave { return func(th float64) float64 { return x(th) - y(th) } }

func neg(x wave) wave { return func(th float64) float64 { return -x(th) } }

// deltaSetup builds a Delta setup for North Weir DC-2's incomer fed
// three-wire (400 V line-to-line).
func deltaSetup(tb testing.TB, ch ...Channel) *Setup {
	tb.Helper()
	s, err := NewSetup(Setup{Channels: ch, Orders: allOrders(), Wiring: Delta, NominalV: 400, NominalI: 160, ILA: 160, Reference: -1})
	if err != nil {
		tb.Fatal(err)
	}
	return s
}

func llCh(name string, from, to byte) Channel {
	return Channel{Name: name, Kind: Voltage, Phase: from, To: to}
}
func iCh(name string, p byte) Channel { return Channel{Name: name, Kind: Current, Phase: p} }

func relNear(got, want float64) bool {
	return math.Abs(got-want) <= deltaTol*math.Max(1, math.Abs(want))
}

// TestTwoWattmeterBalanced: 400 V line-to-line, 50 A, current lagging its
// phase voltage by 30°. src: two-wattmeter method, textbook closed form
// (REFERENCE §8): W1 = V_L·I_L·cos(30° + φ) = 400·50·cos 60° = 10000 W,
// W2 = V_L·I_L·cos(30° − φ) = 20000 W, P = W1 + W2 = √3·V_L·I_L·cos φ =
// 30000 W, Q = √3·(W2 − W1) = 17320.508 var; IEEE 1459-2010 three-wire
// (REFERENCE §4.2, §8): balanced Ve = V_L/√3 = 230.940 V, Ie = 50 A,
// Se = √3·V_L·I_L = 34641.016 VA.
func TestTwoWattmeterBalanced(t *testing.T) {
	t.Parallel()
	s := deltaSetup(t, llCh("vab", 'a', 'b'), llCh("vcb", 'c', 'b'), iCh("ia", 'a'), iCh("ic", 'c'))
	v := balancedV(400 / math.Sqrt(3))
	ia := cosine(50, 1, -30*deg)
	ic := cosine(50, 1, (120-30)*deg)
	r := NewRecord(s)
	Compute(s, inputFor(t, s, waves(nWin, vll(v[0], v[1]), vll(v[2], v[1]), ia, ic)), r)
	if len(r.Phases) != 0 {
		t.Errorf("%d phases; delta records have none (DESIGN Delta wiring)", len(r.Phases))
	}
	tot := r.Total
	for _, c := range []struct {
		name      string
		got, want float64
	}{
		{"p_w", tot.P, 30000},
		{"q_var", tot.Q1, 10000 * math.Sqrt(3)},
		{"ve_v", tot.Ve, 400 / math.Sqrt(3)},
		{"ie_a", tot.Ie, 50},
		{"se_va", tot.Se, math.Sqrt(3) * 400 * 50},
		{"se1_va", tot.Se1, math.Sqrt(3) * 400 * 50},
		{"pf", tot.PF, math.Cos(30 * deg)},
		{"dpf", tot.DPF, math.Cos(30 * deg)},
		{"P1+", tot.P1Pos, 30000},
		{"sequence voltage pos (line-to-line)", r.SeqV[0].Pos, 400},
		{"sequence voltage neg", r.SeqV[0].Neg, 0},
		{"sequence current pos", r.SeqI[0].Pos, 50},
		{"unbalance voltage_pct", r.UnbV, 0},
		{"unbalance current_pct", r.UnbI, 0},
	} {
		if !relNear(c.got, c.want) {
			t.Errorf("%s = %.9g, want %.9g", c.name, c.got, c.want)
		}
	}
	if !IsNull(tot.S) {
		t.Errorf("s_va = %v; the arithmetic sum does not apply to delta, want null", tot.S)
	}
	if r.Flags&FlagInComputed == 0 || r.Flags&FlagUndefined != 0 {
		t.Errorf("flags %v, want in_computed (ib computed) and not undefined", r.Flags.Names())
	}
	// Angles stay relative to the reference (vab, at 30° ahead of va):
	// ia at −30° − 30° = −60°. src: DESIGN Conventions of measurement.
	if got := r.Channels[2].H[0].PhaseDeg; !near(got, -60, 1e-7) {
		t.Errorf("ia phase %v°, want −60° against vab", got)
	}
}

// TestTwoWattmeterUnbalanced: balanced 400 V, Ia = 60 A ∠−20°, Ic = 40 A
// ∠85°, Ib = −(Ia + Ic). src: hand computation of Blondel's two readings,
// recomputed here with complex arithmetic (REFERENCE §8):
// W1 = Re(Vab·Ia*) = 15426.9026 W, W2 = Re(Vcb·Ic*) = 15939.1152 W,
// P = 31366.0178 W; Q1 = Σφ Im(Vφ·Iφ*) = 19779.5585 var; |Ib| = 62.9100 A,
// Ie = sqrt((60² + 40² + 62.91²)/3) = 55.24994 A, Se = 3·230.94·Ie =
// 38278.283 VA (IEEE 1459-2010 three-wire, REFERENCE §4.2).
func TestTwoWattmeterUnbalanced(t *testing.T) {
	t.Parallel()
	s := deltaSetup(t, llCh("vab", 'a', 'b'), llCh("vcb", 'c', 'b'), iCh("ia", 'a'), iCh("ic", 'c'))
	v := balancedV(400 / math.Sqrt(3))
	r := NewRecord(s)
	Compute(s, inputFor(t, s, waves(nWin, vll(v[0], v[1]), vll(v[2], v[1]), cosine(60, 1, -20*deg), cosine(40, 1, 85*deg))), r)
	const handTol = 1e-6 // the hand figures above carry 9 to 10 significant digits
	for _, c := range []struct {
		name      string
		got, want float64
	}{
		{"p_w", r.Total.P, 31366.017801944872},
		{"q_var", r.Total.Q1, 19779.558518818005},
		{"ie_a", r.Total.Ie, 55.249942936645944},
		{"se_va", r.Total.Se, 38278.283312620806},
	} {
		if math.Abs(c.got-c.want) > handTol*c.want {
			t.Errorf("%s = %.10g, want %.10g", c.name, c.got, c.want)
		}
	}
	if r.UnbI < 10 {
		t.Errorf("current unbalance %v %%, want a clearly unbalanced set", r.UnbI)
	}
}

// TestDeltaMatchesWye measures one unbalanced, distorted three-wire load
// both ways: as wye with phase voltages to the artificial neutral (va + vb +
// vc = 0) and three CTs, and as delta with line-to-line channels (one
// wired the other way round). src: Blondel's theorem (REFERENCE §8: n − 1
// wattmeters measure an n-wire system for any balance of load) for P and
// Q1; IEEE 1459-2010 (REFERENCE §4.2): with no zero-sequence voltage and no
// neutral current, the four-wire and three-wire Ve and Ie coincide
// (3ΣV_LN² = ΣV_LL²), so Se, Se1 and PF agree too; IEC 61000-4-30 u2 is the
// same ratio from line-to-line or phase voltages.
func TestDeltaMatchesWye(t *testing.T) {
	t.Parallel()
	// unbalanced voltages with no zero sequence: pos 230 V, neg 4.6 V (2 %),
	// a 5th of 2.1 %
	va := sum(cosine(230, 1, 0), cosine(4.6, 1, 17*deg), cosine(4.83, 5, 40*deg))
	vb := sum(cosine(230, 1, -120*deg), cosine(4.6, 1, (17+120)*deg), cosine(4.83, 5, (40+120)*deg))
	vc := func(th float64) float64 { return -va(th) - vb(th) }
	ia := sum(cosine(62, 1, -25*deg), cosine(12.4, 5, 150*deg), cosine(6.1, 7, -70*deg))
	ib := sum(cosine(48, 1, -150*deg), cosine(9.6, 5, 20*deg), cosine(3.3, 11, 95*deg))
	ic := func(th float64) float64 { return -ia(th) - ib(th) }

	wye := wyeSetup(t, false, allOrders())
	rw := NewRecord(wye)
	Compute(wye, inputFor(t, wye, waves(nWin, va, vb, vc, ia, ib, ic)), rw)

	for _, tc := range []struct {
		name string
		ch   []Channel
		x    []wave
	}{
		{"two CTs, ab and cb", []Channel{llCh("vab", 'a', 'b'), llCh("vcb", 'c', 'b'), iCh("ia", 'a'), iCh("ic", 'c')},
			[]wave{vll(va, vb), vll(vc, vb), ia, ic}},
		{"three CTs, ab bc and ac", []Channel{llCh("vab", 'a', 'b'), llCh("vbc", 'b', 'c'), llCh("vac", 'a', 'c'), iCh("ia", 'a'), iCh("ib", 'b'), iCh("ic", 'c')},
			[]wave{vll(va, vb), vll(vb, vc), vll(va, vc), ia, ib, ic}},
		{"two CTs on a and b, ac and bc", []Channel{llCh("vac", 'a', 'c'), llCh("vbc", 'b', 'c'), iCh("ia", 'a'), iCh("ib", 'b')},
			[]wave{vll(va, vc), vll(vb, vc), ia, ib}},
		{"two CTs, ba and bc", []Channel{llCh("vba", 'b', 'a'), llCh("vbc", 'b', 'c'), iCh("ia", 'a'), iCh("ic", 'c')},
			[]wave{neg(vll(va, vb)), vll(vb, vc), ia, ic}},
	} {
		t.Run(tc.name, func(t *testing.T) {
			t.Parallel()
			s := deltaSetup(t, tc.ch...)
			r := NewRecord(s)
			Compute(s, inputFor(t, s, waves(nWin, tc.x...)), r)
			for _, c := range []struct {
				name      string
				got, want float64
			}{
				{"p_w", r.Total.P, rw.Total.P},
				{"q_var", r.Total.Q1, rw.Total.Q1},
				{"ve_v", r.Total.Ve, rw.Total.Ve},
				{"ie_a", r.Total.Ie, rw.Total.Ie},
				{"se_va", r.Total.Se, rw.Total.Se},
				{"se1_va", r.Total.Se1, rw.Total.Se1},
				{"pf", r.Total.PF, rw.Total.PF},
				{"dpf", r.Total.DPF, rw.Total.DPF},
				{"unbalance voltage_pct", r.UnbV, rw.UnbV},
				{"unbalance current_pct", r.UnbI, rw.UnbI},
				{"current sequence 5 neg", r.SeqI[4].Neg, rw.SeqI[4].Neg},
				{"voltage sequence 1 pos ÷ √3", r.SeqV[0].Pos / math.Sqrt(3), rw.SeqV[0].Pos},
			} {
				if !relNear(c.got, c.want) {
					t.Errorf("%s = %.12g, wye gives %.12g", c.name, c.got, c.want)
				}
			}
			if r.SeqV[0].Zero != 0 {
				t.Errorf("voltage zero sequence %v; line-to-line voltages have none", r.SeqV[0].Zero)
			}
		})
	}
	if !near(rw.UnbV, 2, 1e-9) {
		t.Errorf("wye voltage unbalance %v %%, want 2 %% (4.6/230, the synthesis)", rw.UnbV)
	}
}

// TestDeltaRotation: an acb line-to-line set is flagged rotation_acb.
// src: DESIGN Conventions of measurement (negative sequence dominant).
func TestDeltaRotation(t *testing.T) {
	t.Parallel()
	s := deltaSetup(t, llCh("vab", 'a', 'b'), llCh("vbc", 'b', 'c'), llCh("vca", 'c', 'a'))
	v := balancedV(230)
	r := NewRecord(s)
	Compute(s, inputFor(t, s, waves(nWin, vll(v[0], v[2]), vll(v[2], v[1]), vll(v[1], v[0]))), r)
	if r.Flags&FlagRotationACB == 0 {
		t.Errorf("flags %v, want rotation_acb", r.Flags.Names())
	}
	if r.HasFreq10s || len(r.SeqI) != 0 || !IsNull(r.Total.P) {
		t.Errorf("voltage-only delta: want no current sequence and null totals")
	}
}

func TestDeltaSetupErrors(t *testing.T) {
	t.Parallel()
	cases := []struct {
		name string
		ch   []Channel
		want error
		src  string
	}{
		{"neutral current", []Channel{llCh("vab", 'a', 'b'), llCh("vcb", 'c', 'b'), iCh("ia", 'a'), iCh("ic", 'c'), iCh("in", 'n')}, ErrChannel, "DESIGN Delta wiring: no neutral in three-wire"},
		{"phase-to-neutral voltage", []Channel{{Name: "va", Kind: Voltage, Phase: 'a'}}, ErrChannel, "DESIGN Delta wiring: voltages ab|bc|ca|ba|cb|ac"},
		{"aa", []Channel{llCh("vaa", 'a', 'a')}, ErrChannel, "DESIGN Delta wiring"},
		{"ab and ba", []Channel{llCh("vab", 'a', 'b'), llCh("vba", 'b', 'a')}, ErrDuplicate, "common practice, no source"},
		{"one CT", []Channel{llCh("vab", 'a', 'b'), llCh("vcb", 'c', 'b'), iCh("ia", 'a')}, ErrDelta, "Blondel's theorem (REFERENCE §8): n − 1 elements"},
		{"CTs a, b with ab and cb", []Channel{llCh("vab", 'a', 'b'), llCh("vcb", 'c', 'b'), iCh("ia", 'a'), iCh("ib", 'b')}, ErrDelta, "DESIGN Delta wiring: both voltages share the phase without a CT"},
		{"three CTs, one voltage", []Channel{llCh("vab", 'a', 'b'), iCh("ia", 'a'), iCh("ib", 'b'), iCh("ic", 'c')}, ErrDelta, "Blondel's theorem (REFERENCE §8)"},
	}
	for _, c := range cases {
		if _, err := NewSetup(Setup{Channels: c.ch, Orders: []int{1}, Wiring: Delta, NominalV: 400, Reference: -1}); !errors.Is(err, c.want) {
			t.Errorf("%s: err %v, want %v (%s)", c.name, err, c.want, c.src)
		}
	}
	if _, err := NewSetup(Setup{Channels: []Channel{llCh("vab", 'a', 'b')}, Orders: []int{1}, Wiring: Wye, NominalV: 230, Reference: -1}); !errors.Is(err, ErrChannel) {
		t.Errorf("line-to-line channel on wye: err %v, want ErrChannel (DESIGN Delta wiring)", err)
	}
}

// TestDeltaAggregate: a 3 s aggregate of identical delta windows keeps
// the window's totals. src: DESIGN Aggregation (means; Se from Ve, Ie).
func TestDeltaAggregate(t *testing.T) {
	t.Parallel()
	s := deltaSetup(t, llCh("vab", 'a', 'b'), llCh("vcb", 'c', 'b'), iCh("ia", 'a'), iCh("ic", 'c'))
	v := balancedV(400 / math.Sqrt(3))
	r := NewRecord(s)
	Compute(s, inputFor(t, s, waves(nWin, vll(v[0], v[1]), vll(v[2], v[1]), cosine(50, 1, -30*deg), cosine(50, 1, 90*deg))), r)
	a := NewAggregator(s)
	for range 15 {
		a.Add(r)
	}
	out := NewRecord(s)
	a.Result(out)
	for _, c := range []struct {
		name      string
		got, want float64
	}{
		{"p_w", out.Total.P, 30000},
		{"se_va", out.Total.Se, math.Sqrt(3) * 400 * 50},
		{"pf", out.Total.PF, math.Cos(30 * deg)},
		{"dpf", out.Total.DPF, math.Cos(30 * deg)},
		{"unbalance", out.UnbV, 0},
	} {
		if !relNear(c.got, c.want) {
			t.Errorf("%s = %.12g, want %.12g (two-wattmeter closed form, as TestTwoWattmeterBalanced)", c.name, c.got, c.want)
		}
	}
	if !IsNull(out.Total.S) || out.Flags&FlagInComputed == 0 {
		t.Errorf("s_va %v flags %v: want null s_va and in_computed", out.Total.S, out.Flags.Names())
	}
}
