package alarm

import (
	"errors"
	"math"
	"math/cmplx"
	"testing"
	"time"

	"github.com/gridloupe/gridloupe/metrics"
)

// srcUnb is the unbalance definition the project uses for voltages and
// currents alike (metrics.Compute): 100·|X1⁻|/|X1⁺|, the negative- to
// positive-sequence ratio of IEC 61000-4-30 (u2), here of the currents.
const srcUnb = "IEC 61000-4-30 u2 = |X⁻|/|X⁺| applied to currents, closed form recomputed in the test"

// tolUnb: the ratio comes from phasors through float64 sums; 1e-9 % is far
// above rounding and far below any alarm threshold (common practice, no
// source).
const tolUnb = 1e-9

// busSetup: the invented North Weir bus with two circuits, an incomer
// (ia, ib, ic) and a pump drive (p1a, p1b, p1c), fundamental only.
func busSetup(tb testing.TB) *metrics.Setup {
	tb.Helper()
	ch := []metrics.Channel{
		{Name: "va", Kind: metrics.Voltage, Phase: 'a'}, {Name: "vb", Kind: metrics.Voltage, Phase: 'b'}, {Name: "vc", Kind: metrics.Voltage, Phase: 'c'},
		{Name: "ia", Kind: metrics.Current, Phase: 'a'}, {Name: "ib", Kind: metrics.Current, Phase: 'b'}, {Name: "ic", Kind: metrics.Current, Phase: 'c'},
		{Name: "p1a", Kind: metrics.Current, Phase: 'a'}, {Name: "p1b", Kind: metrics.Current, Phase: 'b'}, {Name: "p1c", Kind: metrics.Current, Phase: 'c'},
	}
	s, err := metrics.NewSetup(metrics.Setup{Channels: ch, Orders: []int{1}, Wiring: metrics.Wye, NominalV: 230, ILA: 320, Reference: -1,
		Circuits: []metrics.Circuit{{Name: "incomer", Currents: []int{3, 4, 5}}, {Name: "pump1", Currents: []int{6, 7, 8}, ILA: 128}}})
	if err != nil {
		tb.Fatal(err)
	}
	return s
}

// phasorInput is one window of n samples whose channels hold the given
// fundamental RMS phasors: Σx² = n·|X|², Σv·i = n·Re(V·conj(I)).
func phasorInput(s *metrics.Setup, x []complex128) *metrics.Input {
	const n = 2048
	in := &metrics.Input{Ch: make([]metrics.ChannelSums, len(s.Channels)), SumVI: make([]float64, len(s.Products)),
		FreqHz: 50, OmegaHz: 50, Lock: true}
	for i := range in.Ch {
		a := cmplx.Abs(x[i])
		in.Ch[i] = metrics.ChannelSums{N: n, SumSq: n * a * a, Peak: a * math.Sqrt2, Phasors: []complex128{x[i]}}
	}
	for k, p := range s.Products {
		in.SumVI[k] = n * real(x[p.V]*cmplx.Conj(x[p.I]))
	}
	return in
}

// TestUnbalanceCurrentPerCircuit: a rule on unbalance_current_pct names
// its circuit and reads that circuit's phase currents. Pump 1 draws
// 100 A on a and b and 70 A on c (all at the balanced angles 0°, −120°,
// +120°), the incomer a balanced 100 A. Closed form: the deficit
// ΔIc = −30∠120° gives I⁺ = 100 + a²·ΔIc/3 = 90 A and I⁻ = a·ΔIc/3, |I⁻| =
// 10 A, so u2 = 10/90 = 11.11 %. The pump's rule (above 5 %) raises; the
// incomer's stays quiet.
func TestUnbalanceCurrentPerCircuit(t *testing.T) {
	s := busSetup(t)
	rot := func(deg float64) complex128 { return cmplx.Rect(1, deg*math.Pi/180) }
	x := []complex128{230 * rot(0), 230 * rot(-120), 230 * rot(120),
		100 * rot(-20), 100 * rot(-140), 100 * rot(100),
		100 * rot(0), 100 * rot(-120), 70 * rot(120)}
	r := metrics.NewRecord(s)
	metrics.Compute(s, phasorInput(s, x), r)
	want := 100.0 / 9 // src: srcUnb, 10/90·100 %
	if got := r.Circuits[1].Rec.UnbI; math.Abs(got-want) > tolUnb {
		t.Fatalf("pump1 unbalance %v %%, want %v %% (%s)", got, want, srcUnb)
	}
	if got := r.Circuits[0].Rec.UnbI; math.Abs(got) > tolUnb {
		t.Fatalf("incomer unbalance %v %%, want 0 (balanced; %s)", got, srcUnb)
	}
	rule := func(name, circuit string) Rule {
		return Rule{Name: name, Metric: MetricUnbalanceI, Level: metrics.Int3s, Above: true, Threshold: 5, Deadband: 0.5,
			Target: Target{Channel: -1, Circuit: circuit}}
	}
	e, err := New([]Rule{rule("pump1-unb", "pump1"), rule("incomer-unb", "incomer")}, s, nil)
	if err != nil {
		t.Fatal(err)
	}
	r.Interval, r.Start, r.DurationS = metrics.Int3s, t0, 3
	tr := e.Evaluate(r, nil)
	if len(tr) != 1 || tr[0].Rule != "pump1-unb" || !tr[0].Raised || math.Abs(tr[0].Value-want) > tolUnb {
		t.Fatalf("transitions %+v; want pump1-unb raised at %.4f %% and nothing from the balanced incomer", tr, want)
	}
	// a record without the circuits (none computed) is a null value for
	// the circuit's rule: no transition, no panic (Evaluator doc: a null
	// value holds the state)
	bare := *r
	bare.Circuits, bare.Start = nil, t0.Add(time.Second)
	if tr := e.Evaluate(&bare, nil); len(tr) != 0 {
		t.Fatalf("record without circuits: transitions %+v, want none (a null value holds the state)", tr)
	}
	// the pump's currents balanced again: the rule clears (below 5 − 0.5)
	x[8] = 100 * rot(120)
	r2 := metrics.NewRecord(s)
	metrics.Compute(s, phasorInput(s, x), r2)
	r2.Interval, r2.Start, r2.DurationS = metrics.Int3s, t0.Add(3*time.Second), 3
	if tr := e.Evaluate(r2, nil); len(tr) != 1 || tr[0].Rule != "pump1-unb" || tr[0].Raised {
		t.Fatalf("transitions %+v; want pump1-unb cleared", tr)
	}
}

// TestUnbalanceCurrentCircuitErrors: with circuits, the rule must name one
// that exists; the voltage unbalance is the bus's and takes no circuit
// (README "Alarm rules").
func TestUnbalanceCurrentCircuitErrors(t *testing.T) {
	s := busSetup(t)
	for _, tc := range []struct {
		name    string
		metric  string
		circuit string
	}{
		{"no circuit named", MetricUnbalanceI, ""},
		{"unknown circuit", MetricUnbalanceI, "pump9"},
		{"voltage unbalance of a circuit", MetricUnbalanceV, "pump1"},
	} {
		t.Run(tc.name, func(t *testing.T) {
			_, err := New([]Rule{{Name: "u", Metric: tc.metric, Level: metrics.Int3s, Above: true, Threshold: 2,
				Target: Target{Channel: -1, Circuit: tc.circuit}}}, s, nil)
			if !errors.Is(err, ErrTarget) {
				t.Fatalf("err %v, want ErrTarget (README Alarm rules)", err)
			}
		})
	}
}

// TestBaselineCircuitBins: a baseline rule on a circuit (pf of pump1,
// unbalance_current_pct of pump1) with no load channels bins its load by
// that circuit's phase currents, not the bus's, which has none (README
// "Alarm rules": the load bins are of the phase currents).
func TestBaselineCircuitBins(t *testing.T) {
	s := busSetup(t)
	for _, m := range []string{MetricPF, MetricUnbalanceI} {
		t.Run(m, func(t *testing.T) {
			ru := Rule{Name: "b", Metric: m, Level: metrics.Int10min, Above: m == MetricUnbalanceI, Threshold: 0.05,
				Target:   Target{Channel: -1, Total: m == MetricPF, Circuit: "pump1"},
				Baseline: &Baseline{Learn: time.Hour, Base: 128}}
			e, err := New([]Rule{ru}, s, nil)
			if err != nil {
				t.Fatal(err)
			}
			if got := e.c[0].binCh; len(got) != 3 || got[0] != 6 || got[1] != 7 || got[2] != 8 {
				t.Errorf("load bins by channels %v, want pump1's p1a, p1b, p1c [6 7 8]", got)
			}
		})
	}
}
