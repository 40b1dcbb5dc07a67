package metrics

import "testing"

// TestNeutralTHDUndefinedByNature: a balanced six-pulse-like load whose
// neutral carries only a 3rd harmonic (2 A, the simulator's single-phase
// loads) has a neutral fundamental of zero, so the neutral's THD and
// harmonic percentages are null; that is the neutral's nature, not a
// problem, so the record carries no `undefined` flag (README "What is
// measured"), in the window and in the aggregate. A phase current with no
// fundamental still flags the record.
func TestNeutralTHDUndefinedByNature(t *testing.T) {
	t.Parallel()
	s := wyeSetup(t, true, allOrders())
	ia, ib, ic := cosine(100, 1, 0), cosine(100, 1, -120*deg), cosine(100, 1, 120*deg)
	in := cosine(2, 3, 0) // src: a neutral of triplen current only, common practice
	r := compute(t, s, inputFor(t, s, waves(2000, append(balancedV(230), ia, ib, ic, in)...)))
	n := &r.Channels[6]
	if !IsNull(n.THDPct) || !IsNull(n.THDH50Pct) || !IsNull(n.H[2].Pct) {
		t.Errorf("neutral thd %v / %v, h3 pct %v: want null (fundamental below the floor)", n.THDPct, n.THDH50Pct, n.H[2].Pct)
	}
	if r.Flags&FlagUndefined != 0 {
		t.Errorf("flags %v: the neutral's undefined THD flags the whole window", r.Flags.Names())
	}
	a := NewAggregator(s)
	a.Add(r)
	a.Add(r)
	var out Record
	a.Result(&out)
	if out.Flags&FlagUndefined != 0 || !IsNull(out.Channels[6].THDPct) {
		t.Errorf("aggregate flags %v, neutral thd %v: want no undefined flag and null", out.Flags.Names(), out.Channels[6].THDPct)
	}

	// a phase current without a fundamental is a problem worth a flag
	r = compute(t, s, inputFor(t, s, waves(2000, append(balancedV(230), ia, ib, cosine(2, 3, 0), in)...)))
	if r.Flags&FlagUndefined == 0 || !IsNull(r.Channels[5].THDPct) {
		t.Errorf("phase c without fundamental: flags %v, thd %v; want undefined and null", r.Flags.Names(), r.Channels[5].THDPct)
	}
}
