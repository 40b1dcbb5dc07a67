package summary

import (
	"encoding/json"
	"math"
	"strings"
	"testing"
	"time"

	"github.com/gridloupe/gridloupe/metrics"
)

// maxBytes is the Field contract's bound for a summary message (DESIGN
// "Building and plant integration": under 1 KB), before the publisher adds
// "seq" (at most 28 bytes: `"seq":18446744073709551615,`).
const maxBytes = 1024 - 28

func wye(t *testing.T, il float64) *metrics.Setup {
	t.Helper()
	ch := []metrics.Channel{
		{Name: "va", Kind: metrics.Voltage, Phase: 'a'}, {Name: "vb", Kind: metrics.Voltage, Phase: 'b'}, {Name: "vc", Kind: metrics.Voltage, Phase: 'c'},
		{Name: "ia", Kind: metrics.Current, Phase: 'a'}, {Name: "ib", Kind: metrics.Current, Phase: 'b'}, {Name: "ic", Kind: metrics.Current, Phase: 'c'},
		{Name: "in", Kind: metrics.Current, Phase: 'n'},
	}
	orders := make([]int, 50)
	for i := range orders {
		orders[i] = i + 1
	}
	s, err := metrics.NewSetup(metrics.Setup{Channels: ch, Orders: orders, Wiring: metrics.Wye, NominalV: 230, ILA: il, Reference: 0})
	if err != nil {
		t.Fatal(err)
	}
	return s
}

// fill sets every figure of r to v.
func fill(r *metrics.Record, v float64) { fillEach(r, v, v, v, v, v, v) }

// fillEach sets voltages vr, currents ir, powers pw, power factors pf,
// percentages pct and the frequency f.
func fillEach(r *metrics.Record, vr, ir, pw, pf, pct, f float64) {
	for i := range r.Channels {
		c := &r.Channels[i]
		c.RMS = ir
		if i < 3 {
			c.RMS = vr
		}
		c.THDPct, c.THDH50Pct, c.TDDPct, c.TDDH50Pct = pct, pct, pct, pct
	}
	for k := range r.Phases {
		p := &r.Phases[k]
		p.P, p.Q1, p.PF, p.DPF = pw, pw, pf, pf
	}
	t := &r.Total
	t.P, t.Q1, t.PF, t.DPF, t.Ve, t.Ie = pw, pw, pf, pf, vr, ir
	r.FreqHz, r.UnbV, r.UnbI = f, pct, pct
}

// TestSummaryUnder1KB: with every figure at the widest a low-voltage
// cabinet gives (voltages −9999.9 V, currents −9999.99 A, powers −99 MW,
// power factors −0.9999, percentages −999.99 %, 69.999 Hz: far beyond
// what the gateway measures; common practice, no source), every flag set
// and the North Weir names, the summary of a three-phase four-wire record
// stays under 1 KB.
func TestSummaryUnder1KB(t *testing.T) {
	s := wye(t, 160)
	r := metrics.NewRecord(s)
	r.Interval, r.Start, r.DurationS = metrics.Int10min, time.Date(2026, 3, 1, 10, 0, 0, 0, time.UTC), 600
	fillEach(r, -9999.94321, -9999.994321, -98765432.1, -0.99994321, -999.994321, 69.99943)
	r.Flags = ^metrics.Flags(0)
	sm := From(s, r)
	b := sm.AppendJSON(nil, "north-weir-dc2", "dc2-gw1")
	if len(b) > maxBytes {
		t.Errorf("widest summary %d bytes, want at most %d:\n%s", len(b), maxBytes, b)
	}
	var m map[string]any
	if err := json.Unmarshal(b, &m); err != nil {
		t.Fatalf("not JSON: %v\n%s", err, b)
	}
	t.Logf("widest summary: %d bytes", len(b))
}

// TestSummaryFigures: the figures are the record's, rounded to their
// stated resolution; THD-V is thd_h50_pct and the current TDD
// tdd_h50_pct, keyed so; lead/lag follows the sign of Q1 (DESIGN
// "Conventions of measurement": Q1 positive for a lagging load); the
// interval's end is start + duration.
func TestSummaryFigures(t *testing.T) {
	s := wye(t, 160)
	r := metrics.NewRecord(s)
	r.Interval, r.Start, r.DurationS = metrics.Int3s, time.Date(2026, 3, 1, 10, 0, 0, 0, time.UTC), 2.99912109375
	r.Flags = metrics.FlagPartial
	fill(r, 1)
	r.FreqHz = 50.0165743
	for i := range r.Channels {
		r.Channels[i].THDPct, r.Channels[i].TDDPct = 99, 98 // must not be shown
	}
	r.Channels[0].RMS, r.Channels[0].THDH50Pct = 230.43199357923874, 6.105921021420005
	r.Channels[3].RMS, r.Channels[3].TDDH50Pct = 138.64021442663415, 33.2873211770465
	r.Phases[0].P, r.Phases[0].Q1, r.Phases[0].PF, r.Phases[0].DPF = 28675.2499494132, 6669.618067103456, 0.8975842342916237, 0.9740017374894773
	r.Phases[1].Q1 = -12.5 // leading
	r.Phases[2].Q1 = metrics.Null()
	r.UnbV, r.UnbI = 0.02328298750685579, metrics.Null()
	b := From(s, r).AppendJSON(nil, "north-weir-dc2", "dc2-gw1")
	for _, want := range []string{
		`"interval":"3s","end":"2026-03-01T10:00:02.999121Z","flags":["partial"],"freq_hz":50.017`,
		`"a":{"v_v":230.4,"i_a":138.64,"p_w":28675,"q_var":6670,"pf":0.8976,"dpf":0.974,"v_thd_h50_pct":6.11,"i_tdd_h50_pct":33.29,"lead_lag":"lag"}`,
		`"lead_lag":"lead"}`, `"lead_lag":null}`,
		`"unbalance":{"voltage_pct":0.02,"current_pct":null}`,
	} {
		if !strings.Contains(string(b), want) {
			t.Errorf("summary lacks %s:\n%s", want, b)
		}
	}
	if strings.Contains(string(b), ":99") || strings.Contains(string(b), ":98") {
		t.Errorf("thd_pct or tdd_pct shown instead of the orders 2-50 values:\n%s", b)
	}
	var m struct {
		Total map[string]any `json:"total"`
	}
	if err := json.Unmarshal(b, &m); err != nil || m.Total["v_v"] != 1.0 || m.Total["lead_lag"] != "lag" {
		t.Errorf("total %v (%v)", m.Total, err)
	}
	if _, ok := m.Total["v_thd_h50_pct"]; ok {
		t.Errorf("the total carries a distortion figure: %v", m.Total)
	}
	// without il_a the current's figure is its THD, keyed so
	s2 := wye(t, 0)
	r2 := metrics.NewRecord(s2)
	fill(r2, 2)
	if b := From(s2, r2).AppendJSON(nil, "x", "y"); !strings.Contains(string(b), `"i_thd_h50_pct":2`) || strings.Contains(string(b), "tdd") {
		t.Errorf("without il_a: %s", b)
	}
	if got := string(appendRound(nil, math.Copysign(0, -1), 2)); got != "0" {
		t.Errorf("negative zero prints %q", got)
	}
}

// bus returns the shipped several-circuit example's setup
// (testdata/north-weir-bus.yaml, the invented North Weir bus): bus
// voltages va, vb, vc and the circuits incomer (IL 320 A), pump1 (128 A)
// and pump2 (192 A), three phase currents each, all orders.
func bus(t *testing.T) *metrics.Setup { t.Helper(); return busIL(t, 320) }

// busIL is bus with the top-level il_a il (0 = none: the incomer then has
// no IL and no TDD).
func busIL(t *testing.T, il float64) *metrics.Setup {
	t.Helper()
	ch := []metrics.Channel{
		{Name: "va", Kind: metrics.Voltage, Phase: 'a'}, {Name: "vb", Kind: metrics.Voltage, Phase: 'b'}, {Name: "vc", Kind: metrics.Voltage, Phase: 'c'},
	}
	var circ []metrics.Circuit
	for _, c := range []struct {
		name string
		il   float64
	}{{"incomer", 0}, {"pump1", 128}, {"pump2", 192}} {
		cc := metrics.Circuit{Name: c.name, ILA: c.il}
		for _, ph := range "abc" {
			cc.Currents = append(cc.Currents, len(ch))
			ch = append(ch, metrics.Channel{Name: c.name + string(ph), Kind: metrics.Current, Phase: byte(ph)})
		}
		circ = append(circ, cc)
	}
	orders := make([]int, 50)
	for i := range orders {
		orders[i] = i + 1
	}
	s, err := metrics.NewSetup(metrics.Setup{Channels: ch, Orders: orders, Wiring: metrics.Wye, NominalV: 230, ILA: il, Reference: -1, Circuits: circ})
	if err != nil {
		t.Fatal(err)
	}
	return s
}

// TestSummaryCircuitsUnder1KB: the shipped bus's three circuits, with
// every figure at the widest (Widest: as TestSummaryUnder1KB) and every
// flag set, stay under 1 KB with "seq"; a fourth circuit does not, and
// the gateway refuses such a config (cmd/gridloupe).
func TestSummaryCircuitsUnder1KB(t *testing.T) {
	s := bus(t)
	w := Widest(s, nil, "north-weir-dc2", "dc2-gw1")
	if w > MaxBytes {
		t.Errorf("widest bus summary %d bytes, want at most %d", w, MaxBytes)
	}
	// a circuit's entry is about 170 bytes at the widest: the three of
	// them again with pump1 twice more do not fit (project bound)
	if w4 := Widest(s, []int{0, 1, 2, 1}, "north-weir-dc2", "dc2-gw1"); w4 <= MaxBytes {
		t.Errorf("widest summary of four entries %d bytes, want above %d", w4, MaxBytes)
	}
	t.Logf("widest bus summary (3 circuits): %d bytes, seq included", w)
}

// TestWidestIsWidest: Widest is no smaller than the summary of any record
// whose figures stay within its ranges: here the widest record of
// TestSummaryUnder1KB's fill and a realistic bus record (common practice,
// no source: Widest must bound what the gateway publishes).
func TestWidestIsWidest(t *testing.T) {
	s := bus(t)
	w := Widest(s, nil, "north-weir-dc2", "dc2-gw1")
	for _, f := range [][6]float64{
		{-9999.94321, -9999.994321, -98765432.1, -0.99994321, -999.994321, 69.99943},
		{230.31, 116.684, 71841.2, 0.8912, 29.64, 50.02},
	} {
		r := metrics.NewRecord(s)
		r.Interval = metrics.Int10min // the longest label with 200ms
		fillEach(r, f[0], f[1], f[2], f[3], f[4], f[5])
		for _, c := range r.Circuits {
			fillEach(c.Rec, f[0], f[1], f[2], f[3], f[4], f[5])
			c.Rec.Total.Se = f[2]
		}
		r.Flags = ^metrics.Flags(0)
		if n := SeqBytes + len(From(s, r).AppendJSON(nil, "north-weir-dc2", "dc2-gw1")); n > w {
			t.Errorf("a summary of %d bytes beyond Widest's %d (figures %v)", n, w, f)
		}
	}
}

// TestSummaryCircuitFigures: with circuits the bus part carries each bus
// voltage's V and THD-V and the voltage unbalance, and no total; each
// circuit its own total P, Q1, Se, PF, DPF, lead/lag and the TDD of each
// phase current against its own il_a (README "MQTT topics and payloads").
func TestSummaryCircuitFigures(t *testing.T) {
	s := bus(t)
	r := metrics.NewRecord(s)
	r.Interval, r.Start, r.DurationS = metrics.Int3s, time.Date(2026, 3, 1, 10, 0, 0, 0, time.UTC), 3
	fill(r, 1)
	r.Channels[0].RMS, r.Channels[0].THDH50Pct = 230.43199357923874, 6.105921021420005
	r.UnbV = 0.0232
	for k, c := range r.Circuits {
		fill(c.Rec, float64(k+2))
		c.Rec.Total.Se = float64(10 * (k + 2))
	}
	r.Circuits[1].Rec.Total.Q1 = -5      // pump1 leading
	r.Channels[3+3+1].TDDH50Pct = 12.345 // pump1's phase b (channel p1b)
	b := string(From(s, r).AppendJSON(nil, "north-weir-dc2", "dc2-gw1"))
	for _, want := range []string{
		`"phases":{"a":{"v_v":230.4,"v_thd_h50_pct":6.11},"b":{"v_v":1,"v_thd_h50_pct":1},"c":{"v_v":1,"v_thd_h50_pct":1}},"unbalance":{"voltage_pct":0.02},"circuits":{`,
		`"incomer":{"p_w":2,"q_var":2,"se_va":20,"pf":2,"dpf":2,"i_tdd_h50_pct":{"a":1,"b":1,"c":1},"lead_lag":"lag"}`,
		`"pump1":{"p_w":3,"q_var":-5,"se_va":30,"pf":3,"dpf":3,"i_tdd_h50_pct":{"a":1,"b":12.35,"c":1},"lead_lag":"lead"}`,
		`"pump2":{"p_w":4,`,
	} {
		if !strings.Contains(b, want) {
			t.Errorf("summary lacks %s:\n%s", want, b)
		}
	}
	if strings.Contains(b, `"total"`) || strings.Contains(b, "current_pct") {
		t.Errorf("the bus of a circuits setup has no currents, so no total and no current unbalance:\n%s", b)
	}
	// without a top-level il_a the incomer has no IL: its currents' figure
	// is their THD, keyed so, while the pumps keep TDD on their own il_a
	s0 := busIL(t, 0)
	r0 := metrics.NewRecord(s0)
	fill(r0, 1)
	for k, c := range r0.Circuits {
		fill(c.Rec, float64(k+2))
	}
	r0.Channels[3].THDH50Pct, r0.Channels[6].TDDH50Pct = 41.5, 33.25
	b0 := string(From(s0, r0).AppendJSON(nil, "x", "y"))
	if !strings.Contains(b0, `"incomer":{"p_w":2,"q_var":2,"se_va":0,"pf":2,"dpf":2,"i_thd_h50_pct":{"a":41.5,`) || !strings.Contains(b0, `"i_tdd_h50_pct":{"a":33.25,`) {
		t.Errorf("without top-level il_a: %s", b0)
	}
	// only the picked circuits, in the order given
	if b := string(FromCircuits(s, r, []int{2, 0}).AppendJSON(nil, "x", "y")); !strings.Contains(b, `"circuits":{"pump2":`) || !strings.Contains(b, `},"incomer":`) || strings.Contains(b, "pump1") {
		t.Errorf("picked pump2, incomer: %s", b)
	}
	// a pick outside the circuits is skipped, never a panic (STYLE.md:
	// panic only on programmer error in DSP calls; common practice, no source)
	if b := string(FromCircuits(s, r, []int{-1, 3, 1}).AppendJSON(nil, "x", "y")); !strings.Contains(b, `"circuits":{"pump1":`) || strings.Contains(b, "incomer") || strings.Contains(b, "pump2") {
		t.Errorf("picked -1, 3 (no such circuits), pump1: %s", b)
	}
}

// TestSummaryCircuitNeutral: a circuit's neutral current has no phase
// figure of its own in the summary: the per-phase distortion lists a, b
// and c only (README "MQTT topics and payloads": TDD per phase current).
func TestSummaryCircuitNeutral(t *testing.T) {
	ch := []metrics.Channel{
		{Name: "va", Kind: metrics.Voltage, Phase: 'a'}, {Name: "vb", Kind: metrics.Voltage, Phase: 'b'}, {Name: "vc", Kind: metrics.Voltage, Phase: 'c'},
		{Name: "ia", Kind: metrics.Current, Phase: 'a'}, {Name: "ib", Kind: metrics.Current, Phase: 'b'}, {Name: "ic", Kind: metrics.Current, Phase: 'c'},
		{Name: "in", Kind: metrics.Current, Phase: 'n'}, {Name: "ja", Kind: metrics.Current, Phase: 'a'},
	}
	s, err := metrics.NewSetup(metrics.Setup{Channels: ch, Orders: []int{1, 3, 5}, Wiring: metrics.Wye, NominalV: 230, ILA: 100, Reference: -1,
		Circuits: []metrics.Circuit{{Name: "main", Currents: []int{3, 4, 5, 6}}, {Name: "aux", Currents: []int{7}, ILA: 10}}})
	if err != nil {
		t.Fatal(err)
	}
	r := metrics.NewRecord(s)
	fill(r, 1)
	for _, c := range r.Circuits {
		fill(c.Rec, 2)
	}
	b := string(From(s, r).AppendJSON(nil, "x", "y"))
	if !strings.Contains(b, `"main":{`) || !strings.Contains(b, `_pct":{"a":1,"b":1,"c":1},"lead_lag"`) || strings.Contains(b, `"n":`) {
		t.Errorf("main's phase currents a, b, c only, no neutral:\n%s", b)
	}
}
