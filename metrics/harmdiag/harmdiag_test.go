package harmdiag

import (
	"math"
	"testing"
	"time"

	"github.com/gridloupe/gridloupe/metrics"
)

func setup(t *testing.T) *metrics.Setup {
	t.Helper()
	s, err := metrics.NewSetup(metrics.Setup{
		Channels: []metrics.Channel{{Name: "va", Kind: metrics.Voltage, Phase: 'a'}, {Name: "ia", Kind: metrics.Current, Phase: 'a'}},
		Orders:   []int{1, 5, 7, 11}, Wiring: metrics.SinglePhase, NominalV: 230, ILA: 160})
	if err != nil {
		t.Fatal(err)
	}
	return s
}

// tol: a handful of float64 products (common practice, no source).
const tol = 1e-9

func TestDirections(t *testing.T) {
	s := setup(t)
	d := NewDirections(s)
	r := metrics.NewRecord(s)
	set := func(ch, k int, rms, deg float64) {
		r.Channels[ch].H[k].RMS, r.Channels[ch].H[k].PhaseDeg, r.Channels[ch].H[k].Pct = rms, deg, 100*rms/100
	}
	for i := range 10 {
		set(0, 0, 230, 0)
		set(1, 0, 100, -20)
		set(0, 1, 6.9, -118.5)
		set(1, 1, 30, 61.5) // 180° from its voltage
		set(0, 2, 4.6, 10)
		set(1, 2, 10, -50) // 60° from its voltage
		set(0, 3, 1, 0)
		set(1, 3, 2, metrics.Null()) // an angle too small to mean anything
		if i == 9 {
			set(1, 2, 10, 150) // one value the other way
		}
		d.Add(r)
	}
	got := d.Result()
	// Closed form P_h = V·I·cos(Δθ): h5 6.9·30·cos(180°) = −207 W;
	// h7 4.6·10·cos(60°) = 23 W nine times and 4.6·10·cos(−140°) once.
	want7 := (9*23 + 46*math.Cos(-140*math.Pi/180)) / 10
	if g := got[0]; g.H != 5 || math.Abs(g.MeanW+207) > tol || g.Injects != 10 || g.Verdict() != "injects" {
		t.Errorf("h5 %+v (%s), want −207 W, injects", g, g.Verdict())
	}
	if g := got[1]; math.Abs(g.MeanW-want7) > tol || g.Absorbs != 9 || g.Injects != 1 || g.Verdict() != "absorbs" {
		t.Errorf("h7 %+v (%s), want %v W, absorbs (9 of 10 agree: the 90 %% rule)", g, g.Verdict(), want7)
	}
	if g := got[2]; g.Records != 0 || g.Verdict() != "" || !math.IsNaN(g.MeanW) {
		t.Errorf("h11 without angles %+v, want no values", g)
	}
}

func TestAgeing(t *testing.T) {
	s := setup(t)
	start := time.Date(2026, 2, 2, 0, 0, 0, 0, time.UTC)
	a := NewAgeing(s, start, 160)
	r := metrics.NewRecord(s)
	r.Interval = metrics.Int10min
	// Two weeks; 30 values a week at 100 A (62.5 % of IL: bin 60) with TDD
	// 6 % then 7 %, and 10 values at 20 A (bin 10), fewer than a cell needs.
	for w := range 2 {
		for i := range 40 {
			r.Start = start.Add(time.Duration(w)*7*24*time.Hour + time.Duration(i)*10*time.Minute)
			r.Channels[1].H[0].RMS, r.Channels[1].TDDH50Pct = 100, 6+float64(w)
			if i >= 30 {
				r.Channels[1].H[0].RMS, r.Channels[1].TDDH50Pct = 20, 1
			}
			a.Add(r)
		}
	}
	tb := a.Table()
	if tb.Weeks != 2 || len(tb.Bins) != 2 || tb.Bins[0] != 10 || tb.Bins[1] != 60 {
		t.Fatalf("table %+v, want 2 weeks, bins 10 and 60 %%", tb)
	}
	if tb.TDD[0][1] != 6 || tb.TDD[1][1] != 7 || !math.IsNaN(tb.TDD[0][0]) || tb.N[0][0] != 10 {
		t.Errorf("cells %v counts %v, want 6 and 7 %% in bin 60, bin 10 below MinCell", tb.TDD, tb.N)
	}
	if tb.Best != 60 || math.Abs(tb.Trend-1) > tol || tb.Basis != "IL" {
		t.Errorf("best %d trend %v basis %q, want bin 60 rising 1 point", tb.Best, tb.Trend, tb.Basis)
	}
	if tb := NewAgeing(s, start, 0).Table(); tb.Weeks != 0 || tb.Best != -1 {
		t.Errorf("empty ageing %+v", tb)
	}
}

func TestSense(t *testing.T) {
	cases := []struct {
		deg  float64
		want string
		src  string
	}{
		{180, "injects", "closed form: cos 180° = −1"},
		{0, "absorbs", "cos 0° = 1"},
		{90, "neither", "cos 90° = 0: a lossless source impedance (V_h = −j·h·X·I_h)"},
		{-87.5, "neither", "cos 87.5° = 0.044, inside the 3° band"},
		{86, "absorbs", "cos 86° = 0.070, outside it"},
		{-94, "injects", "cos 94° = −0.070"},
	}
	for _, tc := range cases {
		vi := 6.9 * 30
		if got := Sense(vi*math.Cos(tc.deg*math.Pi/180), vi); got != tc.want {
			t.Errorf("%v°: %s, want %s (src: %s)", tc.deg, got, tc.want, tc.src)
		}
	}
}
