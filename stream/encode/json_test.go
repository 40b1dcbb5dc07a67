package encode

import (
	"bytes"
	"encoding/json"
	"errors"
	"math"
	"slices"
	"strconv"
	"strings"
	"testing"
	"time"

	"github.com/gridloupe/gridloupe/metrics"
)

// objectKeys returns the keys of the JSON object raw in document order.
func objectKeys(tb testing.TB, raw []byte) []string {
	tb.Helper()
	dec := json.NewDecoder(bytes.NewReader(raw))
	if tok, err := dec.Token(); err != nil || tok != json.Delim('{') {
		tb.Fatalf("not an object: %s (%v)", raw, err)
	}
	var keys []string
	for dec.More() {
		tok, err := dec.Token()
		if err != nil {
			tb.Fatalf("token: %v", err)
		}
		keys = append(keys, tok.(string))
		var skip json.RawMessage
		if err := dec.Decode(&skip); err != nil {
			tb.Fatalf("value of %q: %v", tok, err)
		}
	}
	return keys
}

func decodeMap(tb testing.TB, raw []byte) map[string]any {
	tb.Helper()
	var m map[string]any
	if err := json.Unmarshal(raw, &m); err != nil {
		tb.Fatalf("output is not a JSON object: %v\n%s", err, raw)
	}
	return m
}

func sub(tb testing.TB, m map[string]any, path ...string) map[string]any {
	tb.Helper()
	cur := m
	for _, p := range path {
		next, ok := cur[p].(map[string]any)
		if !ok {
			tb.Fatalf("%v: %q is not an object (%T)", path, p, cur[p])
		}
		cur = next
	}
	return cur
}

func sortedKeys(m map[string]any) []string {
	k := make([]string, 0, len(m))
	for key := range m {
		k = append(k, key)
	}
	slices.Sort(k)
	return k
}

// TestAppendJSONPresence checks which keys appear for each kind of setup.
func TestAppendJSONPresence(t *testing.T) {
	t.Parallel()
	cases := []struct {
		name     string
		spec     setupSpec
		h50      bool     // thd_h50_pct on every channel
		tdd      []string // channels with tdd_pct and pct_il
		tddH50   bool     // tdd_h50_pct on those
		phases   []string // keys of "phases"; nil = absent
		seq      []string // keys of "sequence"; nil = absent
		unb      []string // keys of "unbalance"; nil = absent
		topLevel []string
		src      string
	}{
		{name: "wye all orders with IL", spec: specWyeAll, h50: true, tdd: []string{"ia", "ib", "ic", "in"}, tddH50: true,
			phases: []string{"a", "b", "c"}, seq: []string{"current", "voltage"}, unb: []string{"current_pct", "voltage_pct"},
			topLevel: []string{"interval", "start", "duration_s", "samples", "freq_hz", "flags", "channels", "phases", "total", "sequence", "unbalance"},
			src:      "DESIGN Interface contract: record example key order; h50 with harmonics: all; TDD/pct_il for currents with il_a"},
		{name: "wye order list without IL", spec: specWyeSub,
			phases: []string{"a", "b", "c"}, seq: []string{"current", "voltage"}, unb: []string{"current_pct", "voltage_pct"},
			topLevel: []string{"interval", "start", "duration_s", "samples", "freq_hz", "flags", "channels", "phases", "total", "sequence", "unbalance"},
			src:      "DESIGN: a list of orders leaves h50 values absent; no il_a, no TDD"},
		{name: "single phase", spec: specSingle, tdd: []string{"ia"}, phases: []string{"a"},
			topLevel: []string{"interval", "start", "duration_s", "samples", "freq_hz", "flags", "channels", "phases", "total"},
			src:      "DESIGN: single-phase has one phases entry, total, no sequence or unbalance"},
		{name: "wye voltages only", spec: specVOnly, seq: []string{"voltage"}, unb: []string{"voltage_pct"},
			topLevel: []string{"interval", "start", "duration_s", "samples", "freq_hz", "flags", "channels", "sequence", "unbalance"},
			src:      "DESIGN: phases needs a voltage and a current; total only with phases; a key that does not apply is absent"},
		{name: "wye three currents, one voltage", spec: specIOnlyA, tdd: []string{"ia", "ib", "ic"}, phases: []string{"a"},
			seq: []string{"current"}, unb: []string{"current_pct"},
			topLevel: []string{"interval", "start", "duration_s", "samples", "freq_hz", "flags", "channels", "phases", "total", "sequence", "unbalance"},
			src:      "DESIGN: sequences per side that has three phases; unbalance side only when its sequence exists"},
	}
	for _, tc := range cases {
		t.Run(tc.name, func(t *testing.T) {
			t.Parallel()
			s := buildSetup(t, tc.spec)
			r := newRecord(s, seqFloats())
			out := AppendJSON(nil, s, r)
			m := decodeMap(t, out)
			if got := objectKeys(t, out); !slices.Equal(got, tc.topLevel) {
				t.Errorf("top-level keys %v, want %v (src: %s)", got, tc.topLevel, tc.src)
			}
			chans := sub(t, m, "channels")
			var names []string
			for _, ch := range s.Channels {
				names = append(names, ch.Name)
			}
			rawChans := json.RawMessage(nil)
			var top map[string]json.RawMessage
			if err := json.Unmarshal(out, &top); err != nil {
				t.Fatal(err)
			}
			rawChans = top["channels"]
			if got := objectKeys(t, rawChans); !slices.Equal(got, names) {
				t.Errorf("channel order %v, want Setup order %v", got, names)
			}
			for _, ch := range s.Channels {
				c := sub(t, chans, ch.Name)
				isTDD := slices.Contains(tc.tdd, ch.Name)
				want := []string{"rms", "dc", "thd_pct"}
				if tc.h50 {
					want = append(want, "thd_h50_pct")
				}
				if isTDD {
					want = append(want, "tdd_pct")
					if tc.tddH50 {
						want = append(want, "tdd_h50_pct")
					}
				}
				want = append(want, "crest_factor", "harmonics") // README "Record": crest_factor on every channel
				var chRaw map[string]json.RawMessage
				if err := json.Unmarshal(rawChans, &chRaw); err != nil {
					t.Fatal(err)
				}
				if got := objectKeys(t, chRaw[ch.Name]); !slices.Equal(got, want) {
					t.Errorf("%s keys %v, want %v (src: %s)", ch.Name, got, want, tc.src)
				}
				hs, _ := c["harmonics"].([]any)
				if len(hs) != len(s.Orders) {
					t.Fatalf("%s: %d harmonics, want %d", ch.Name, len(hs), len(s.Orders))
				}
				for k, hv := range hs {
					h := hv.(map[string]any)
					if h["h"] != float64(s.Orders[k]) {
						t.Errorf("%s harmonic %d: h=%v, want %d (src: DESIGN: fundamental first, ascending)", ch.Name, k, h["h"], s.Orders[k])
					}
					wantH := []string{"h", "pct", "phase_deg", "rms"}
					if isTDD {
						wantH = []string{"h", "pct", "pct_il", "phase_deg", "rms"}
					}
					if got := sortedKeys(h); !slices.Equal(got, wantH) {
						t.Errorf("%s h%d keys %v, want %v", ch.Name, s.Orders[k], got, wantH)
					}
				}
			}
			checkKeys := func(key string, want []string) {
				t.Helper()
				v, ok := m[key]
				if want == nil {
					if ok {
						t.Errorf("%q present, want absent (src: %s)", key, tc.src)
					}
					return
				}
				obj, ok := v.(map[string]any)
				if !ok {
					t.Fatalf("%q missing or not an object (src: %s)", key, tc.src)
				}
				if got := sortedKeys(obj); !slices.Equal(got, want) {
					t.Errorf("%q keys %v, want %v (src: %s)", key, got, want, tc.src)
				}
			}
			checkKeys("phases", tc.phases)
			checkKeys("sequence", tc.seq)
			checkKeys("unbalance", tc.unb)
			if tc.phases != nil {
				for _, p := range tc.phases {
					pk := objectKeys(t, mustRaw(t, out, "phases", p))
					want := []string{"p_w", "p1_w", "q_var", "s_va", "s1_va", "sn_va", "di_var", "dv_var", "sh_va", "pf", "dpf"}
					if !slices.Equal(pk, want) {
						t.Errorf("phase %s keys %v, want %v (src: DESIGN record example)", p, pk, want)
					}
				}
				tk := objectKeys(t, mustRaw(t, out, "total"))
				want := []string{"p_w", "q_var", "s_va", "se_va", "se1_va", "ve_v", "ie_a", "pf", "dpf"}
				if !slices.Equal(tk, want) {
					t.Errorf("total keys %v, want %v (src: DESIGN record example)", tk, want)
				}
			}
			for _, side := range tc.seq {
				sq := sub(t, m, "sequence", side)
				var wantOrders []string
				for _, h := range s.Orders {
					wantOrders = append(wantOrders, itoa(h))
				}
				if got := objectKeys(t, mustRaw(t, out, "sequence", side)); !slices.Equal(got, wantOrders) {
					t.Errorf("sequence %s keys %v, want %v", side, got, wantOrders)
				}
				one := sub(t, sq, "1")
				if got := sortedKeys(one); !slices.Equal(got, []string{"dominant", "neg", "pos", "zero"}) {
					t.Errorf("sequence %s 1 keys %v", side, got)
				}
			}
			if f, ok := m["flags"].([]any); !ok || len(f) != 0 {
				t.Errorf("flags = %#v, want [] always present (src: README, Record: \"flags\":[] always present)", m["flags"])
			}
		})
	}
}

func itoa(h int) string { return strconv.Itoa(h) }

// mustRaw returns the raw JSON at path in the object out.
func mustRaw(tb testing.TB, out []byte, path ...string) []byte {
	tb.Helper()
	cur := json.RawMessage(out)
	for _, p := range path {
		var m map[string]json.RawMessage
		if err := json.Unmarshal(cur, &m); err != nil {
			tb.Fatalf("%v at %q: %v", path, p, err)
		}
		v, ok := m[p]
		if !ok {
			tb.Fatalf("%v: %q absent", path, p)
		}
		cur = v
	}
	return cur
}

// jHarm and friends mirror the schema so encoding/json can read numbers
// back with strconv.ParseFloat (exact, round-to-nearest).
type (
	jHarm struct {
		H        int     `json:"h"`
		RMS      float64 `json:"rms"`
		Pct      float64 `json:"pct"`
		PctIL    float64 `json:"pct_il"`
		PhaseDeg float64 `json:"phase_deg"`
	}
	jChan struct {
		RMS       float64 `json:"rms"`
		DC        float64 `json:"dc"`
		THDPct    float64 `json:"thd_pct"`
		THDH50Pct float64 `json:"thd_h50_pct"`
		TDDPct    float64 `json:"tdd_pct"`
		TDDH50Pct float64 `json:"tdd_h50_pct"`
		H         []jHarm `json:"harmonics"`
	}
	jPhase struct {
		P   float64 `json:"p_w"`
		P1  float64 `json:"p1_w"`
		Q1  float64 `json:"q_var"`
		S   float64 `json:"s_va"`
		S1  float64 `json:"s1_va"`
		SN  float64 `json:"sn_va"`
		DI  float64 `json:"di_var"`
		DV  float64 `json:"dv_var"`
		SH  float64 `json:"sh_va"`
		PF  float64 `json:"pf"`
		DPF float64 `json:"dpf"`
	}
	jTotal struct {
		P   float64 `json:"p_w"`
		Q1  float64 `json:"q_var"`
		S   float64 `json:"s_va"`
		Se  float64 `json:"se_va"`
		Se1 float64 `json:"se1_va"`
		Ve  float64 `json:"ve_v"`
		Ie  float64 `json:"ie_a"`
		PF  float64 `json:"pf"`
		DPF float64 `json:"dpf"`
	}
	jSeq struct {
		Pos      float64 `json:"pos"`
		Neg      float64 `json:"neg"`
		Zero     float64 `json:"zero"`
		Dominant *string `json:"dominant"`
	}
	jRec struct {
		Interval  string                     `json:"interval"`
		Start     string                     `json:"start"`
		DurationS float64                    `json:"duration_s"`
		Samples   uint64                     `json:"samples"`
		FreqHz    float64                    `json:"freq_hz"`
		Freq10s   *float64                   `json:"freq_10s_hz"`
		Flags     []string                   `json:"flags"`
		Channels  map[string]jChan           `json:"channels"`
		Phases    map[string]jPhase          `json:"phases"`
		Total     jTotal                     `json:"total"`
		Sequence  map[string]map[string]jSeq `json:"sequence"`
		Unbalance map[string]float64         `json:"unbalance"`
	}
)

// TestAppendJSONRoundTrip checks that every float prints as a decimal that
// parses back to the identical float64, over random values of all
// magnitudes (src: strconv.AppendFloat precision -1 is the shortest decimal
// that round-trips; strconv.ParseFloat rounds correctly: Go strconv docs).
func TestAppendJSONRoundTrip(t *testing.T) {
	t.Parallel()
	s := buildSetup(t, specWyeAll)
	rounds := 20
	if testing.Short() {
		rounds = 3
	}
	var out []byte
	for seed := range uint64(rounds) {
		r := newRecord(s, randFloats(seed+1))
		r.HasFreq10s, r.Freq10sHz = true, 49.98765432101234
		out = AppendJSON(out[:0], s, r)
		var j jRec
		if err := json.Unmarshal(out, &j); err != nil {
			t.Fatalf("seed %d: %v", seed, err)
		}
		same := func(what string, got, want float64) {
			t.Helper()
			if math.Float64bits(got) != math.Float64bits(want) {
				t.Fatalf("seed %d %s: read back %v (%#x), wrote %v (%#x)", seed, what, got, math.Float64bits(got), want, math.Float64bits(want))
			}
		}
		same("duration_s", j.DurationS, r.DurationS)
		same("freq_hz", j.FreqHz, r.FreqHz)
		same("freq_10s_hz", *j.Freq10s, r.Freq10sHz)
		if j.Samples != r.Samples {
			t.Fatalf("samples %d, want %d", j.Samples, r.Samples)
		}
		for i, ch := range s.Channels {
			c, v := j.Channels[ch.Name], &r.Channels[i]
			same(ch.Name+".rms", c.RMS, v.RMS)
			same(ch.Name+".dc", c.DC, v.DC)
			same(ch.Name+".thd_pct", c.THDPct, v.THDPct)
			same(ch.Name+".thd_h50_pct", c.THDH50Pct, v.THDH50Pct)
			if ch.Kind == metrics.Current {
				same(ch.Name+".tdd_pct", c.TDDPct, v.TDDPct)
				same(ch.Name+".tdd_h50_pct", c.TDDH50Pct, v.TDDH50Pct)
			}
			for k := range v.H {
				same(ch.Name+".rms(h)", c.H[k].RMS, v.H[k].RMS)
				same(ch.Name+".pct", c.H[k].Pct, v.H[k].Pct)
				same(ch.Name+".phase_deg", c.H[k].PhaseDeg, v.H[k].PhaseDeg)
				if ch.Kind == metrics.Current {
					same(ch.Name+".pct_il", c.H[k].PctIL, v.H[k].PctIL)
				}
			}
		}
		for k, p := range s.Pairs {
			g, w := j.Phases[string(p.Phase)], &r.Phases[k]
			for _, f := range [][2]float64{{g.P, w.P}, {g.P1, w.P1}, {g.Q1, w.Q1}, {g.S, w.S}, {g.S1, w.S1}, {g.SN, w.SN},
				{g.DI, w.DI}, {g.DV, w.DV}, {g.SH, w.SH}, {g.PF, w.PF}, {g.DPF, w.DPF}} {
				same("phase "+string(p.Phase), f[0], f[1])
			}
		}
		g, w := j.Total, r.Total
		for _, f := range [][2]float64{{g.P, w.P}, {g.Q1, w.Q1}, {g.S, w.S}, {g.Se, w.Se}, {g.Se1, w.Se1},
			{g.Ve, w.Ve}, {g.Ie, w.Ie}, {g.PF, w.PF}, {g.DPF, w.DPF}} {
			same("total", f[0], f[1])
		}
		for side, seq := range map[string][]metrics.Seq{"voltage": r.SeqV, "current": r.SeqI} {
			for _, q := range seq {
				g := j.Sequence[side][itoa(q.H)]
				same("sequence pos", g.Pos, q.Pos)
				same("sequence neg", g.Neg, q.Neg)
				same("sequence zero", g.Zero, q.Zero)
				if g.Dominant == nil || *g.Dominant != q.Dominant() {
					t.Fatalf("sequence %s %d dominant %v, want %s", side, q.H, g.Dominant, q.Dominant())
				}
			}
		}
		same("unbalance voltage", j.Unbalance["voltage_pct"], r.UnbV)
		same("unbalance current", j.Unbalance["current_pct"], r.UnbI)
	}
}

// add sums two float64 values as typed operands (an untyped constant
// expression 0.1 + 0.2 would be exact and give 0.3).
func add(a, b float64) float64 { return a + b }

// TestAppendNum checks spellings of single numbers.
func TestAppendNum(t *testing.T) {
	t.Parallel()
	cases := []struct {
		v    float64
		want string
		src  string
	}{
		{add(0.1, 0.2), "0.30000000000000004", "IEEE 754 binary64 sum of 0.1 and 0.2 (Go spec: typed float64 operands round each operation), shortest round-trip decimal (strconv)"},
		{50, "50", "shortest decimal of an integer-valued float64 (strconv)"},
		{230.05, "230.05", "shortest round-trip decimal (strconv)"},
		{-0.5, "-0.5", "shortest round-trip decimal (strconv)"},
		{1234567.5, "1234567.5", "encoding/json: plain digits below 1e21"},
		{1e21, "1e+21", "encoding/json: exponent form from 1e21"},
		{1e-7, "1e-7", "encoding/json: exponent form below 1e-6, e-07 cleaned to e-7"},
		{1e-6, "0.000001", "encoding/json: plain digits from 1e-6"},
		{5e-324, "5e-324", "smallest subnormal float64 (IEEE 754), shortest form"},
		{math.MaxFloat64, "1.7976931348623157e+308", "largest float64 (IEEE 754), shortest form"},
		{math.Copysign(0, -1), "-0", "encoding/json prints negative zero as -0"},
	}
	for _, tc := range cases {
		got := string(appendNum(nil, tc.v))
		if got != tc.want {
			t.Errorf("appendNum(%v) = %s, want %s (src: %s)", tc.v, got, tc.want, tc.src)
		}
		m, err := json.Marshal(tc.v)
		if err != nil || string(m) != got {
			t.Errorf("appendNum(%v) = %s, encoding/json prints %s (%v)", tc.v, got, m, err)
		}
	}
}

// TestAppendNumMatchesEncodingJSON compares against encoding/json over
// random bit patterns (src: encoding/json float encoding, the ES6 number
// format; fixed PCG seed).
func TestAppendNumMatchesEncodingJSON(t *testing.T) {
	t.Parallel()
	next := randFloats(42)
	n := 20000
	if testing.Short() {
		n = 2000
	}
	var b []byte
	for range n {
		v := next()
		b = appendNum(b[:0], v)
		m, err := json.Marshal(v)
		if err != nil {
			t.Fatal(err)
		}
		if !bytes.Equal(b, m) {
			t.Fatalf("appendNum(%v) = %s, encoding/json %s", v, b, m)
		}
	}
}

// TestAppendJSONNull checks that NaN (the null marker) and ±Inf print as
// null (src: DESIGN "an undefined value is null, never NaN or Inf"; RFC 8259
// section 6 has no NaN or Infinity).
func TestAppendJSONNull(t *testing.T) {
	t.Parallel()
	s := buildSetup(t, specWyeAll)
	r := newRecord(s, seqFloats())
	r.FreqHz = metrics.Null()
	r.Channels[0].THDPct = math.Inf(1)
	r.Channels[3].H[4].PhaseDeg = math.Inf(-1)
	r.Total.PF = math.NaN()
	r.UnbI = math.NaN()
	r.SeqV[0].Neg = math.NaN()
	out := AppendJSON(nil, s, r)
	for _, bad := range []string{"NaN", "Inf", "inf"} {
		if bytes.Contains(out, []byte(bad)) {
			t.Errorf("output contains %q", bad)
		}
	}
	m := decodeMap(t, out)
	check := func(what string, v any, present bool) {
		t.Helper()
		if !present || v != nil {
			t.Errorf("%s = %v (present %t), want null", what, v, present)
		}
	}
	v, ok := m["freq_hz"]
	check("freq_hz", v, ok)
	va := sub(t, m, "channels", "va")
	v, ok = va["thd_pct"]
	check("va.thd_pct", v, ok)
	h := sub(t, m, "channels", "ia")["harmonics"].([]any)[4].(map[string]any)
	v, ok = h["phase_deg"]
	check("ia.h5.phase_deg", v, ok)
	v, ok = sub(t, m, "total")["pf"]
	check("total.pf", v, ok)
	v, ok = sub(t, m, "unbalance")["current_pct"]
	check("unbalance.current_pct", v, ok)
	sq := sub(t, m, "sequence", "voltage", "1")
	v, ok = sq["neg"]
	check("sequence.voltage.1.neg", v, ok)
	v, ok = sq["dominant"]
	check("sequence.voltage.1.dominant (undefined with a null component)", v, ok)
}

// TestAppendJSONFlags checks the flags list (src: DESIGN closed set of
// flags; metrics.Flags names in bit order).
func TestAppendJSONFlags(t *testing.T) {
	t.Parallel()
	s := buildSetup(t, specSingle)
	cases := []struct {
		f    metrics.Flags
		want []string
		src  string
	}{
		{0, []string{}, "README, Record: flags always present, [] when none"},
		{metrics.FlagPartial, []string{"partial"}, "DESIGN: closed set"},
		{metrics.FlagGap | metrics.FlagPartial | metrics.FlagClockUnsynced, []string{"partial", "gap", "clock_unsynced"}, "metrics.Flags bit order"},
	}
	all := metrics.Flags(0)
	for i := range len(metrics.FlagNames()) {
		all |= 1 << i
	}
	cases = append(cases, struct {
		f    metrics.Flags
		want []string
		src  string
	}{all, metrics.FlagNames(), "every flag of the DESIGN set, in bit order"})
	for _, tc := range cases {
		r := newRecord(s, seqFloats())
		r.Flags = tc.f
		var j jRec
		if err := json.Unmarshal(AppendJSON(nil, s, r), &j); err != nil {
			t.Fatal(err)
		}
		if j.Flags == nil || !slices.Equal(j.Flags, tc.want) {
			t.Errorf("flags %#v: got %#v, want %#v (src: %s)", tc.f, j.Flags, tc.want, tc.src)
		}
	}
}

// TestAppendJSONHeader checks interval, start and the 10 s frequency key.
func TestAppendJSONHeader(t *testing.T) {
	t.Parallel()
	s := buildSetup(t, specSingle)
	r := newRecord(s, seqFloats())
	r.Interval = metrics.Int10min
	r.Start = time.Date(2026, 3, 1, 11, 0, 0, 0, time.FixedZone("CET", 3600))
	out := AppendJSON(nil, s, r)
	if !bytes.HasPrefix(out, []byte(`{"interval":"10min","start":"2026-03-01T10:00:00.000000Z",`)) {
		t.Errorf("header %s (src: DESIGN Time: RFC 3339 UTC with microseconds; interval labels)", out[:70])
	}
	if bytes.Contains(out, []byte("freq_10s_hz")) {
		t.Errorf("freq_10s_hz present without HasFreq10s (src: DESIGN: only the record ending a 10 s interval)")
	}
	r.Channels[0].RMS = add(0.1, 0.2)
	r.HasFreq10s, r.Freq10sHz = true, 50.0125
	out = AppendJSON(nil, s, r)
	if !bytes.Contains(out, []byte(`"channels":{"va":{"rms":0.30000000000000004,`)) {
		t.Errorf("0.1+0.2 not printed as 0.30000000000000004 (src: IEEE 754 binary64 sum, strconv shortest round-trip): %s", out)
	}
	keys := objectKeys(t, out)
	if i := slices.Index(keys, "freq_10s_hz"); i < 0 || keys[i-1] != "freq_hz" || keys[i+1] != "flags" {
		t.Errorf("keys %v: want freq_10s_hz between freq_hz and flags (src: README, Record, CSV flattens the same keys in order)", keys)
	}
}

// TestJSONString checks the string escaper against encoding/json with HTML
// escaping off (src: RFC 8259 section 7; encoding/json replaces invalid
// UTF-8 by U+FFFD and escapes U+2028/U+2029).
func TestJSONString(t *testing.T) {
	t.Parallel()
	for _, in := range []string{"va", `a"b`, `back\slash`, "tab\there", "nl\ncr\r", "\x00\x01\x1f\x7f", "ü-Ω-€-😀",
		"line\u2028sep\u2029", "bad\xffutf8\xc3", "<&>", ""} {
		got := appendJSONString(nil, in)
		var want bytes.Buffer
		enc := json.NewEncoder(&want)
		enc.SetEscapeHTML(false)
		if err := enc.Encode(in); err != nil {
			t.Fatal(err)
		}
		if w := bytes.TrimSuffix(want.Bytes(), []byte("\n")); !bytes.Equal(got, w) {
			t.Errorf("appendJSONString(%q) = %s, encoding/json %s", in, got, w)
		}
	}
}

// TestCheckRecord checks that mismatched records are refused.
func TestCheckRecord(t *testing.T) {
	t.Parallel()
	s := buildSetup(t, specWyeSub)
	mutate := map[string]func(r *metrics.Record){
		"channel missing":  func(r *metrics.Record) { r.Channels = r.Channels[:2] },
		"harmonic missing": func(r *metrics.Record) { r.Channels[1].H = r.Channels[1].H[:1] },
		"phase missing":    func(r *metrics.Record) { r.Phases = r.Phases[:1] },
		"short sequence":   func(r *metrics.Record) { r.SeqI = r.SeqI[:1] },
	}
	if err := CheckRecord(s, newRecord(s, seqFloats())); err != nil {
		t.Fatalf("good record: %v", err)
	}
	for name, f := range mutate {
		r := newRecord(s, seqFloats())
		f(r)
		var buf bytes.Buffer
		err := NewJSONL(&buf, s).Write(r)
		if !errors.Is(err, ErrShape) {
			t.Errorf("%s: err = %v, want ErrShape", name, err)
		}
		if buf.Len() != 0 {
			t.Errorf("%s: wrote %q", name, buf.String())
		}
		// AppendJSON must still give valid JSON for a mismatched record.
		if out := AppendJSON(nil, s, r); !json.Valid(out) {
			t.Errorf("%s: AppendJSON invalid: %s", name, out)
		}
	}
}

// TestJSONLLines checks one object per line and Flush.
func TestJSONLLines(t *testing.T) {
	t.Parallel()
	s := buildSetup(t, specWyeAll)
	var buf bytes.Buffer
	w := NewJSONL(&buf, s)
	const n = 40 // enough to pass the 32 KiB buffer several times
	for i := range n {
		r := newRecord(s, seqFloats())
		r.Samples = uint64(i)
		if err := w.Write(r); err != nil {
			t.Fatal(err)
		}
	}
	if err := w.Flush(); err != nil {
		t.Fatal(err)
	}
	lines := strings.Split(strings.TrimSuffix(buf.String(), "\n"), "\n")
	if len(lines) != n {
		t.Fatalf("%d lines, want %d", len(lines), n)
	}
	for i, l := range lines {
		var j jRec
		if err := json.Unmarshal([]byte(l), &j); err != nil {
			t.Fatalf("line %d: %v", i, err)
		}
		if j.Samples != uint64(i) {
			t.Fatalf("line %d: samples %d", i, j.Samples)
		}
	}
}

// errWriter fails every write.
type errWriter struct{}

var errDisk = errors.New("disk full")

func (errWriter) Write([]byte) (int, error) { return 0, errDisk }

func TestWriteErrors(t *testing.T) {
	t.Parallel()
	s := buildSetup(t, specWyeAll)
	r := newRecord(s, seqFloats())
	for name, w := range map[string]Writer{
		"jsonl": NewJSONL(errWriter{}, s),
		"csv":   NewCSV(errWriter{}, s),
		"table": NewTable(errWriter{}, s, TableOptions{}),
	} {
		err := w.Write(r) // small output stays in the buffer; then Flush reports the error
		if err == nil {
			err = w.Flush()
		}
		if !errors.Is(err, errDisk) {
			t.Errorf("%s: err = %v, want wrapped disk error", name, err)
		}
	}
}
