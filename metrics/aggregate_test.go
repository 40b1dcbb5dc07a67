package metrics

import (
	"math"
	"testing"
)

// tolAgg: aggregation of identical or hand-computed windows, rounding only.
const tolAgg = 1e-9

func winRec(tb testing.TB, s *Setup, ws ...wave) *Record {
	tb.Helper()
	r := compute(tb, s, inputFor(tb, s, waves(2000, ws...)))
	r.Interval, r.Samples, r.DurationS = Int200ms, 2000, 0.2
	return r
}

func TestAggregateIdenticalWindows(t *testing.T) {
	t.Parallel()
	s := wyeSetup(t, false, allOrders())
	phi := 0.3
	// Voltages carry a 5th (2 %) so no value is a rounding-level difference
	// of squares (those are noise, ~sqrt(ε)·V, not comparable).
	v := balancedV(230)
	for k := range v {
		v[k] = sum(v[k], cosine(4.6, 5, float64(k)*120*deg))
	}
	ws := append(v, sum(cosine(50, 1, -phi), cosine(10, 5, 1)),
		sum(cosine(48, 1, -120*deg-phi), cosine(9, 5, 1+120*deg)), sum(cosine(52, 1, 120*deg-phi), cosine(11, 5, 1-120*deg)))
	w := winRec(t, s, ws...)
	a := NewAggregator(s)
	for range 15 {
		a.Add(w)
	}
	if a.Count() != 15 {
		t.Fatalf("count %d", a.Count())
	}
	out := NewRecord(s)
	a.Result(out)
	checkNoInf(t, out)
	// IEC 61000-4-30 aggregation of 15 equal values returns that value
	// (RMS of equal values, mean of equal values); derived quantities
	// recomputed from them return the window's own.
	wantVals := map[string]float64{}
	walkFloats(valueOf(w), "", func(p string, x float64) { wantVals[p] = x })
	walkFloats(valueOf(out), "", func(p string, x float64) {
		want := wantVals[p]
		switch {
		case p == ".DurationS":
			want = 15 * 0.2
		case IsNull(want) && IsNull(x):
			return
		}
		if !near(x, want, tolAgg*math.Max(1, math.Abs(want))) {
			t.Errorf("%s: aggregate %.12g, window %.12g (15 equal windows, IEC 61000-4-30 aggregation)", p, x, want)
		}
	})
	if out.Samples != 15*2000 || out.Flags != w.Flags {
		t.Errorf("samples %d flags %v, want %d %v (sum, union)", out.Samples, out.Flags.Names(), 15*2000, w.Flags.Names())
	}
}

func TestAggregateRules(t *testing.T) {
	t.Parallel()
	s := singleSetup(t)
	// Window 1: 100 V, 20 A at 60° (P 1000 W, S 2000 VA).
	// Window 2: 200 V, 15 A in phase (P 3000 W, S 3000 VA).
	w1 := winRec(t, s, cosine(100, 1, 0), cosine(20, 1, -60*deg))
	w2 := winRec(t, s, cosine(200, 1, 0), cosine(15, 1, 0))
	w2.Flags |= FlagEvent
	a := NewAggregator(s)
	a.Add(w1)
	a.Add(w2)
	out := NewRecord(s)
	a.Result(out)
	checkNoInf(t, out)
	p1 := (1000 + 3000) / 2.0
	q1 := (2000*math.Sin(60*deg) + 0) / 2
	checks := []struct {
		name      string
		got, want float64
		src       string
	}{
		{"v rms", out.Channels[0].RMS, math.Sqrt((100*100 + 200*200) / 2.0), "IEC 61000-4-30: sqrt of mean of squares (158.11, not the mean 150); hand-computed"},
		{"i rms", out.Channels[1].RMS, math.Sqrt((20*20 + 15*15) / 2.0), "IEC 61000-4-30 RMS rule; hand-computed"},
		{"h1 rms", out.Channels[0].H[0].RMS, math.Sqrt((100*100 + 200*200) / 2.0), "RMS rule for harmonic rms"},
		{"p", out.Phases[0].P, 2000, "DESIGN: p_w mean of 1000 and 3000"},
		{"p1", out.Phases[0].P1, p1, "DESIGN: p1_w mean"},
		{"q1", out.Phases[0].Q1, q1, "DESIGN: q_var mean of 1732.05 and 0"},
		{"pf", out.Phases[0].PF, 4000.0 / 5000, "DESIGN: pf = Σp/Σs = 4000/5000 = 0.8 (not the mean 0.75)"},
		{"dpf", out.Phases[0].DPF, p1 / math.Hypot(p1, q1), "DESIGN: dpf from aggregated P1 and Q1"},
		{"s", out.Phases[0].S, math.Sqrt((100*100+200*200)/2.0) * math.Sqrt((20*20+15*15)/2.0), "DESIGN: s_va = V·I of the aggregated rms"},
		{"total pf", out.Total.PF, 0.8, "DESIGN: total pf = Σp/Σse (single phase Se = S)"},
		{"freq", out.FreqHz, 50, "DESIGN: freq_hz mean"},
		{"duration", out.DurationS, 0.4, "DESIGN: duration_s sum"},
	}
	for _, c := range checks {
		if !near(c.got, c.want, tolAgg*math.Max(1, math.Abs(c.want))) {
			t.Errorf("%s = %.12g, want %.12g (%s)", c.name, c.got, c.want, c.src)
		}
	}
	if out.Samples != 4000 || out.Flags != FlagEvent {
		t.Errorf("samples %d flags %v, want 4000 [event] (sum, union)", out.Samples, out.Flags.Names())
	}
}

func TestAggregateCircularMean(t *testing.T) {
	t.Parallel()
	s := singleSetup(t)
	cases := []struct {
		name   string
		phases []float64 // current angle per window, degrees
		amps   []float64
		want   float64
		src    string
	}{
		{"±179°", []float64{179, -179}, []float64{50, 50}, 180,
			"circular mean: e^{j179°} + e^{−j179°} = 2cos 179° < 0, angle 180° (the arithmetic mean would say 0°)"},
		{"weighted", []float64{0, 90}, []float64{30, 10}, math.Atan2(10, 30) / deg,
			"DESIGN: magnitude-weighted: angle of 30 + 10j = 18.43°"},
		{"−30° three times", []float64{-30, -30, -30}, []float64{5, 6, 7}, -30, "equal angles keep their angle"},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			t.Parallel()
			a := NewAggregator(s)
			for k := range c.phases {
				a.Add(winRec(t, s, cosine(230, 1, 0), cosine(c.amps[k], 1, c.phases[k]*deg)))
			}
			out := NewRecord(s)
			a.Result(out)
			if got := out.Channels[1].H[0].PhaseDeg; !near(got, c.want, tolDeg) {
				t.Errorf("phase %.9g, want %.9g (%s)", got, c.want, c.src)
			}
		})
	}
}

func TestAggregateNulls(t *testing.T) {
	t.Parallel()
	s := singleSetup(t)
	good := winRec(t, s, cosine(230, 1, 0), cosine(40, 1, -0.2))
	bad := compute(t, s, func() *Input {
		in := inputFor(t, s, waves(2000, cosine(230, 1, 0), cosine(400, 1, 0)))
		in.Ch[1].Bad = true
		return in
	}())
	a := NewAggregator(s)
	a.Add(good)
	a.Add(bad)
	a.Add(good)
	out := NewRecord(s)
	a.Result(out)
	checkNoInf(t, out)
	// The bad window's null current values are skipped: the aggregate is
	// the good windows' (DESIGN: null window values skipped for that key);
	// the voltage counts all three windows.
	if !near(out.Channels[1].RMS, 40, 1e-9) || !near(out.Phases[0].P, good.Phases[0].P, 1e-6) {
		t.Errorf("i rms %v p %v, want 40 and %v", out.Channels[1].RMS, out.Phases[0].P, good.Phases[0].P)
	}
	if out.Flags&FlagBadSample == 0 {
		t.Errorf("flags %v, want bad_sample in the union", out.Flags.Names())
	}
	// All null → null.
	a.Reset()
	a.Add(bad)
	a.Result(out)
	if !IsNull(out.Channels[1].RMS) || !IsNull(out.Phases[0].PF) || IsNull(out.Channels[0].RMS) {
		t.Errorf("only a bad window: i rms %v pf %v v rms %v, want null null value", out.Channels[1].RMS, out.Phases[0].PF, out.Channels[0].RMS)
	}
	// Nothing added → every value null, nothing counted.
	a.Reset()
	a.Result(out)
	if a.Count() != 0 || out.Samples != 0 || !IsNull(out.Channels[0].RMS) || !IsNull(out.Total.P) {
		t.Errorf("empty aggregate: count %d samples %d rms %v", a.Count(), out.Samples, out.Channels[0].RMS)
	}
}

func TestAggregateTHDRecomputed(t *testing.T) {
	t.Parallel()
	s := singleSetup(t)
	// Window 1: I1 = 100, I5 = 10; window 2: I1 = 50, I5 = 20.
	w1 := winRec(t, s, cosine(230, 1, 0), sum(cosine(100, 1, 0), cosine(10, 5, 0)))
	w2 := winRec(t, s, cosine(230, 1, 0), sum(cosine(50, 1, 0), cosine(20, 5, 0)))
	a := NewAggregator(s)
	a.Add(w1)
	a.Add(w2)
	out := NewRecord(s)
	a.Result(out)
	i1 := math.Sqrt((100*100 + 50*50) / 2.0)
	i5 := math.Sqrt((10*10 + 20*20) / 2.0)
	want := 100 * i5 / i1 // 17.89 %, not the mean of 10 % and 40 %
	for name, got := range map[string]float64{"thd": out.Channels[1].THDPct, "thd_h50": out.Channels[1].THDH50Pct, "h5 pct": out.Channels[1].H[4].Pct} {
		if !near(got, want, 1e-9) {
			t.Errorf("%s %v, want %v (DESIGN: recomputed from aggregated magnitudes; hand-computed)", name, got, want)
		}
	}
	if got, wantTDD := out.Channels[1].TDDPct, 100*i5/160; !near(got, wantTDD, 1e-9) {
		t.Errorf("tdd %v, want %v (aggregated distortion over IL = 160 A)", got, wantTDD)
	}
}

func TestAggregateUnbalanceRecomputed(t *testing.T) {
	t.Parallel()
	s := wyeSetup(t, false, allOrders())
	mk := func(c float64) *Record {
		return winRec(t, s, cosine(230, 1, 0), cosine(230, 1, -120*deg), cosine(c*230, 1, 120*deg),
			cosine(10, 1, 0), cosine(10, 1, -120*deg), cosine(10, 1, 120*deg))
	}
	a := NewAggregator(s)
	a.Add(mk(0.95))
	a.Add(mk(1))
	out := NewRecord(s)
	a.Result(out)
	// Fortescue (see TestUnbalanceContractCase): window 1 V1 = 230·2.95/3,
	// V2 = 230·0.05/3; window 2 V1 = 230, V2 = 0. RMS-aggregate each.
	pos := math.Sqrt((math.Pow(230*2.95/3, 2) + 230*230) / 2)
	neg := math.Sqrt(math.Pow(230*0.05/3, 2) / 2)
	if !near(out.UnbV, 100*neg/pos, 1e-9) {
		t.Errorf("unbalance %v, want %v (DESIGN: recomputed from aggregated sequence magnitudes)", out.UnbV, 100*neg/pos)
	}
}
