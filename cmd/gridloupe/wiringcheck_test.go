package main

import (
	"encoding/json"
	"math"
	"os"
	"path/filepath"
	"slices"
	"strings"
	"testing"
)

// site3 is an invented three-phase load for the wiring check: 50.02 Hz
// (off nominal on purpose), phase voltages vp, currents amps lagging by lag
// degrees with a six-pulse 5th of 20 % (REFERENCE §5: Ih/I1 = 1/h), phase
// step 120° (−120° for an acb supply).
type site3 struct {
	vp, amps, lag float64
	acb           bool
}

func (s site3) v(p int) func(float64) float64 {
	return phasorWave(s.vp, 50.02, s.step(p))
}

func (s site3) i(p int) func(float64) float64 {
	return s.iLag(p, s.lag)
}

func (s site3) iLag(p int, lag float64) func(float64) float64 {
	f := phasorWave(s.amps, 50.02, s.step(p)-lag)
	h5 := phasorWave(s.amps/5, 5*50.02, 5*(s.step(p)-lag)+180)
	return func(t float64) float64 { return f(t) + h5(t) }
}

func (s site3) step(p int) float64 {
	if s.acb {
		return float64(p) * 120
	}
	return -float64(p) * 120
}

func zero(float64) float64 { return 0 }

func scaled(k float64, f func(float64) float64) func(float64) float64 {
	return func(t float64) float64 { return k * f(t) }
}

func negate(f func(float64) float64) func(float64) float64 { return scaled(-1, f) }

const wyeWiringCfg = `site: north-weir-dc2
nominal: {frequency_hz: 50, voltage_v: 230}
sample_rate_hz: 10240
il_a: 160
` + wyeChannels

type wiringJSON struct {
	Verdict  string `json:"verdict"`
	Rotation string `json:"rotation"`
	Findings []struct {
		Kind   string   `json:"kind"`
		Phases []string `json:"phases"`
		Text   string   `json:"text"`
	} `json:"findings"`
	Caution string `json:"caution"`
}

// TestWiringCheck runs `gridloupe wiring --format json` on one deliberately
// miswired generated recording per finding kind, for wye and for delta (two
// CTs), and on correct hook-ups. src: DESIGN "Wiring check" (kinds, phases
// sorted, verdict, exit status); the miswirings are the physical ones the
// kinds name (a CT turned round negates its current; swapped CTs exchange
// two columns; a CT on the wrong conductor records another phase's
// current); ±10 % off nominal per DESIGN.
func TestWiringCheck(t *testing.T) {
	t.Parallel()
	dir := t.TempDir()
	wyeCfg := writeFile(t, dir, "wye.yaml", wyeWiringCfg)
	deltaCfg := writeFile(t, dir, "delta.yaml", northWeirDelta)
	ok := site3{vp: 230, amps: 120, lag: 25}
	dv := site3{vp: 400 / math.Sqrt(3), amps: 120, lag: 25}
	type want struct {
		kind   string
		phases string
	}
	wye := func(x site3, mod func(c []sig)) []sig {
		c := []sig{{"va", x.v(0)}, {"vb", x.v(1)}, {"vc", x.v(2)}, {"ia", x.i(0)}, {"ib", x.i(1)}, {"ic", x.i(2)}}
		if mod != nil {
			mod(c)
		}
		return c
	}
	delta := func(x site3, mod func(c []sig)) []sig {
		c := []sig{{"vab", diff(x.v(0), x.v(1))}, {"vcb", diff(x.v(2), x.v(1))}, {"ia", x.i(0)}, {"ic", x.i(2)}}
		if mod != nil {
			mod(c)
		}
		return c
	}
	cases := []struct {
		name  string
		cfg   string
		cols  []sig
		want  []want
		rot   string
		inTxt string // a phrase the technician reads
	}{
		{"wye correct", wyeCfg, wye(ok, nil), nil, "abc", ""},
		{"wye correct at 55° lag", wyeCfg, wye(site3{vp: 230, amps: 120, lag: 55}, nil), nil, "abc", ""},
		{"wye correct at 35° lead", wyeCfg, wye(site3{vp: 230, amps: 120, lag: -35}, nil), nil, "abc", ""},
		{"wye supply acb", wyeCfg, wye(site3{vp: 230, amps: 120, lag: 25, acb: true}, nil), []want{{"rotation", "abc"}}, "acb", "a-c-b"},
		{"wye reversed CT b", wyeCfg, wye(ok, func(c []sig) { c[4].f = negate(c[4].f) }), []want{{"reversed_ct", "b"}}, "abc", "P of phase b reads negative"},
		{"wye CTs a and b swapped", wyeCfg, wye(ok, func(c []sig) { c[3].f, c[4].f = c[4].f, c[3].f }), []want{{"swapped_ct", "ab"}}, "abc", "swapped"},
		{"wye CT a on phase c", wyeCfg, wye(ok, func(c []sig) { c[3].f = ok.i(2) }), []want{{"misplaced_ct", "ac"}}, "abc", "follows the voltage of phase c"},
		{"wye dead voltage b", wyeCfg, wye(ok, func(c []sig) { c[1].f = zero }), []want{{"missing", "b"}}, "", "fuse"},
		{"wye dead CT c", wyeCfg, wye(ok, func(c []sig) { c[5].f = zero }), []want{{"missing", "c"}}, "abc", "never open-circuit"},
		{"wye va 15 % high", wyeCfg, wye(ok, func(c []sig) { c[0].f = scaled(1.15, c[0].f) }), []want{{"off_nominal", "a"}}, "abc", "15.0 % above"},
		{"wye ib at 85° lag", wyeCfg, wye(ok, func(c []sig) { c[4].f = ok.iLag(1, 85) }), []want{{"angle", "b"}}, "abc", "more than 60°"},
		{"wye all CTs reversed", wyeCfg, wye(ok, func(c []sig) { c[3].f, c[4].f, c[5].f = negate(c[3].f), negate(c[4].f), negate(c[5].f) }),
			[]want{{"reversed_ct", "a"}, {"reversed_ct", "b"}, {"reversed_ct", "c"}}, "abc", "P of phase c reads negative"},
		{"wye two faults: va high, ib reversed", wyeCfg, wye(ok, func(c []sig) { c[0].f = scaled(1.12, c[0].f); c[4].f = negate(c[4].f) }),
			[]want{{"off_nominal", "a"}, {"reversed_ct", "b"}}, "abc", "12.0 % above"},
		{"wye correct at 40° lead", wyeCfg, wye(site3{vp: 230, amps: 120, lag: -40}, nil), nil, "abc", ""},
		{"wye correct at 58° lag", wyeCfg, wye(site3{vp: 230, amps: 120, lag: 58}, nil), nil, "abc", ""},
		{"wye load too small", wyeCfg, wye(site3{vp: 230, amps: 2, lag: 25}, nil), []want{{"low_load", ""}}, "abc", "too little load"},

		{"delta correct", deltaCfg, delta(dv, nil), nil, "abc", ""},
		{"delta supply acb", deltaCfg, delta(site3{vp: 400 / math.Sqrt(3), amps: 120, lag: 25, acb: true}, nil), []want{{"rotation", "abc"}}, "acb", "a-c-b"},
		{"delta reversed CT c", deltaCfg, delta(dv, func(c []sig) { c[3].f = negate(c[3].f) }), []want{{"reversed_ct", "c"}}, "abc", "two-wattmeter total P reads far too low"},
		{"delta CTs a and c swapped", deltaCfg, delta(dv, func(c []sig) { c[2].f, c[3].f = c[3].f, c[2].f }), []want{{"swapped_ct", "ac"}}, "abc", "swapped"},
		{"delta CT a on phase b", deltaCfg, delta(dv, func(c []sig) { c[2].f = dv.i(1) }), []want{{"misplaced_ct", "ab"}}, "abc", "follows the voltage of phase b"},
		{"delta dead line cb", deltaCfg, delta(dv, func(c []sig) { c[1].f = zero }), []want{{"missing", "bc"}}, "", "fuse"},
		{"delta dead CT a", deltaCfg, delta(dv, func(c []sig) { c[2].f = zero }), []want{{"missing", "a"}}, "abc", "shorting link"},
		{"delta vab 12 % low", deltaCfg, delta(dv, func(c []sig) { c[0].f = scaled(0.88, c[0].f) }), []want{{"off_nominal", "ab"}}, "abc", "12.0 % below"},
		{"delta ic at 85° lag", deltaCfg, delta(dv, func(c []sig) { c[3].f = dv.iLag(2, 85) }), []want{{"angle", "c"}}, "abc", "more than 60°"},
		{"delta load too small", deltaCfg, delta(site3{vp: 400 / math.Sqrt(3), amps: 2, lag: 25}, nil), []want{{"low_load", ""}}, "abc", "too little load"},
	}
	for i, tc := range cases {
		t.Run(tc.name, func(t *testing.T) {
			t.Parallel()
			rec := writeRec(t, dir, "w"+string(rune('a'+i))+".csv", 10240, 1.2, tc.cols)
			res := runCmd("wiring", "--config", tc.cfg, "--format", "json", "--seconds", "1", rec)
			wantCode := 1
			if len(tc.want) == 0 {
				wantCode = 0
			}
			if res.code != wantCode {
				t.Errorf("exit %d, want %d; stderr %s", res.code, wantCode, res.stderr)
			}
			var got wiringJSON
			if err := json.Unmarshal([]byte(res.stdout), &got); err != nil {
				t.Fatalf("%v: %q", err, res.stdout)
			}
			var kinds []want
			all := ""
			for _, f := range got.Findings {
				kinds = append(kinds, want{f.Kind, strings.Join(f.Phases, "")})
				if !slices.IsSorted(f.Phases) {
					t.Errorf("phases %v not sorted", f.Phases)
				}
				all += f.Text + "\n"
			}
			if !slices.Equal(kinds, tc.want) {
				t.Errorf("findings %v, want %v:\n%s", kinds, tc.want, all)
			}
			wantVerdict := "check"
			if len(tc.want) == 0 {
				wantVerdict = "ok"
			}
			if got.Verdict != wantVerdict || got.Rotation != tc.rot {
				t.Errorf("verdict %q rotation %q, want %q %q", got.Verdict, got.Rotation, wantVerdict, tc.rot)
			}
			if tc.inTxt != "" && !strings.Contains(all, tc.inTxt) {
				t.Errorf("findings do not say %q:\n%s", tc.inTxt, all)
			}
			if !strings.Contains(got.Caution, "never open-circuit a loaded CT") {
				t.Errorf("json lacks the safety caution")
			}
		})
	}
}

// TestWiringText: the text report carries the cautions, the verdict and
// the finding in words. src: DESIGN Safety; DESIGN Wiring check.
func TestWiringText(t *testing.T) {
	t.Parallel()
	dir := t.TempDir()
	cfg := writeFile(t, dir, "wye.yaml", wyeWiringCfg)
	ok := site3{vp: 230, amps: 120, lag: 25}
	rec := writeRec(t, dir, "r.csv", 10240, 1.2, []sig{{"va", ok.v(0)}, {"vb", ok.v(1)}, {"vc", ok.v(2)},
		{"ia", ok.i(0)}, {"ib", negate(ok.i(1))}, {"ic", ok.i(2)}})
	res := runCmd("wiring", "--config", cfg, "--seconds", "1", rec)
	for _, s := range []string{"SAFETY", "qualified personnel", "never open-circuit a loaded CT", "Verdict: check",
		"the current on phase b (ib) flows opposite to its voltage: the CT is reversed or its leads are swapped; P of phase b reads negative"} {
		if !strings.Contains(res.stdout, s) {
			t.Errorf("text report lacks %q:\n%s", s, res.stdout)
		}
	}
	if res.code != 1 {
		t.Errorf("exit %d, want 1", res.code)
	}
	if r := runCmd("wiring", "--config", cfg, "--format", "xml", rec); r.code != 2 {
		t.Errorf("--format xml: exit %d, want 2", r.code)
	}
}

// TestWiringSinglePhase: a single-phase hook-up reads ok, and with the
// current column negated (a CT turned round) names reversed_ct on a.
// src: DESIGN Wiring check; the recording is writeCSV's PF 0.8 lagging load.
func TestWiringSinglePhase(t *testing.T) {
	t.Parallel()
	dir := t.TempDir()
	cfg := writeFile(t, dir, "single.yaml", singleCfg)
	rec := writeCSV(t, dir, 10240, nil)
	if r := runCmd("wiring", "--config", cfg, "--format", "json", "--seconds", "1", rec); r.code != 0 || !strings.Contains(r.stdout, `"verdict":"ok"`) || strings.Contains(r.stdout, `"rotation"`) {
		t.Errorf("correct: exit %d %s", r.code, r.stdout)
	}
	rev := writeCSV(t, t.TempDir(), 10240, func(_ int, row string) string {
		v, i, _ := strings.Cut(row, ",")
		if strings.HasPrefix(i, "-") {
			return v + "," + i[1:]
		}
		return v + ",-" + i
	})
	r := runCmd("wiring", "--config", cfg, "--format", "json", "--seconds", "1", rev)
	if r.code != 1 || !strings.Contains(r.stdout, `{"kind":"reversed_ct","phases":["a"]`) {
		t.Errorf("reversed: exit %d %s", r.code, r.stdout)
	}
}

// TestWiringCircuits: the wiring check judges each circuit of a bus on
// its own: the simulated North Weir bus reads ok, and with pump2's CT on
// phase b turned round (its column negated) names that CT and circuit.
// src: DESIGN Wiring check (single and several circuits).
func TestWiringCircuits(t *testing.T) {
	t.Parallel()
	cfg, rec := simulateBus(t, "1.5s")
	if r := runCmd("wiring", "--config", cfg, "--format", "json", "--seconds", "1", rec); r.code != 0 || !strings.Contains(r.stdout, `"findings":[]`) {
		t.Errorf("correct bus: exit %d %s", r.code, r.stdout)
	}
	data, err := os.ReadFile(rec)
	if err != nil {
		t.Fatal(err)
	}
	lines := strings.Split(strings.TrimSpace(string(data)), "\n")
	col := -1
	for i, ln := range lines {
		f := strings.Split(ln, ",")
		switch {
		case strings.HasPrefix(ln, "#"):
		case col < 0:
			col = slices.Index(f, "p2b")
		default:
			if strings.HasPrefix(f[col], "-") {
				f[col] = f[col][1:]
			} else {
				f[col] = "-" + f[col]
			}
			lines[i] = strings.Join(f, ",")
		}
	}
	rev := writeFile(t, filepath.Dir(rec), "rev.csv", strings.Join(lines, "\n")+"\n")
	r := runCmd("wiring", "--config", cfg, "--format", "json", "--seconds", "1", rev)
	if r.code != 1 || !strings.Contains(r.stdout, `{"kind":"reversed_ct","phases":["b"],"text":"circuit pump2: the current on phase b (p2b) flows opposite`) ||
		strings.Count(r.stdout, `"kind"`) != 1 {
		t.Errorf("reversed p2b: exit %d %s", r.code, r.stdout)
	}
}
