package main

import (
	"encoding/json"
	"math"
	"regexp"
	"strconv"
	"strings"
	"testing"
)

// TestCalibrate: a recording whose channels read with the wrong scale
// (va −1.1 %, ia +2.7 %) and a CT with 1.6° of phase lag; the reference
// instrument read the true values. Pasting calibrate's lines into the
// config brings RMS and PF to the reference. src: the true values are the
// synthesis (231.2 V, 118.5 A fundamental lagging 25° with a six-pulse 5th
// of 20 %); PF = DPF/√(1 + THD²) = cos 25°/√1.04 = 0.888718 (REFERENCE §5,
// sinusoidal voltage).
func TestCalibrate(t *testing.T) {
	t.Parallel()
	dir := t.TempDir()
	x := site3{vp: 231.2, amps: 118.5 / math.Sqrt(1.04), lag: 25}
	const sensorLag = 1.6 // degrees at the fundamental, a CT's phase error
	// the CT's lag as a delay: order h lags h·1.6°
	delayed := func(f func(float64) float64) func(float64) float64 {
		tau := sensorLag / 360 / 50.02
		return func(t float64) float64 { return f(t - tau) }
	}
	cols := []sig{
		{"va", scaled(1/0.989, x.v(0))}, {"vb", x.v(1)}, {"vc", x.v(2)},
		{"ia", delayed(scaled(1/1.027, x.i(0)))}, {"ib", x.i(1)}, {"ic", x.i(2)},
	}
	// the raw columns carry the errors the config's scale of 1 does not fix:
	// va reads 0.989⁻¹·(true)/… so the config must learn scale 0.989
	rec := writeRec(t, dir, "cal.csv", 10240, 3.2, cols)
	cfgText := wyeWiringCfg
	cfg := writeFile(t, dir, "before.yaml", cfgText)
	pfTrue := math.Cos(25*math.Pi/180) / math.Sqrt(1.04)
	res := runCmd("calibrate", "--config", cfg, "--reference", "va=231.2,ia=118.5,pf_a="+ftoa(pfTrue), rec)
	if res.code != 0 {
		t.Fatalf("exit %d: %s", res.code, res.stderr)
	}
	if !strings.Contains(res.stdout, "never open-circuit a loaded CT") {
		t.Errorf("output lacks the caution:\n%s", res.stdout)
	}
	// paste: replace each printed channel's entry in the config
	entry := regexp.MustCompile(`(?m)^  - \{name: (\w+),.*\}$`)
	after := cfgText
	n := 0
	for _, m := range entry.FindAllStringSubmatch(res.stdout, -1) {
		old := regexp.MustCompile(`(?m)^  - \{name: ` + m[1] + `,.*\}$`)
		after = old.ReplaceAllString(after, m[0])
		n++
	}
	if n != 2 {
		t.Fatalf("%d corrected entries, want va and ia:\n%s", n, res.stdout)
	}
	cfg2 := writeFile(t, dir, "after.yaml", after)
	res = runCmd("replay", "--config", cfg2, "--interval", "3s", rec)
	if res.code != 0 {
		t.Fatalf("replay after: exit %d %s", res.code, res.stderr)
	}
	var r struct {
		Channels map[string]struct {
			RMS float64 `json:"rms"`
		} `json:"channels"`
		Phases map[string]struct {
			PF  float64 `json:"pf"`
			DPF float64 `json:"dpf"`
		} `json:"phases"`
	}
	if err := json.Unmarshal([]byte(strings.SplitN(res.stdout, "\n", 2)[0]), &r); err != nil {
		t.Fatal(err)
	}
	// Tracked windows at 50.02 Hz and the first-order treatment of the
	// harmonic power leave small residues: measured worst 4e-6 relative
	// on RMS and 4.3e-6 on PF and DPF; bounds 1e-5 (about 2x). A reference
	// instrument's own class (0.2 % to 1 %) is far looser than either.
	const rmsTol, pfTol = 1e-5, 1e-5
	if got := r.Channels["va"].RMS; math.Abs(got-231.2) > rmsTol*231.2 {
		t.Errorf("va %v V after calibration, reference 231.2", got)
	}
	if got := r.Channels["ia"].RMS; math.Abs(got-118.5) > rmsTol*118.5 {
		t.Errorf("ia %v A after calibration, reference 118.5", got)
	}
	if got := r.Phases["a"].PF; math.Abs(got-pfTrue) > pfTol {
		t.Errorf("pf a %v after calibration, reference %v", got, pfTrue)
	}
	if got := r.Phases["a"].DPF; math.Abs(got-math.Cos(25*math.Pi/180)) > pfTol {
		t.Errorf("dpf a %v after calibration, true cos 25° = %v", got, math.Cos(25*math.Pi/180))
	}
	// before calibration the PF was visibly off: the test can fail
	res = runCmd("replay", "--config", cfg, "--interval", "3s", rec)
	if err := json.Unmarshal([]byte(strings.SplitN(res.stdout, "\n", 2)[0]), &r); err != nil {
		t.Fatal(err)
	}
	if math.Abs(r.Phases["a"].PF-pfTrue) < 1e-3 {
		t.Errorf("before calibration pf a %v already matches %v: the sensor lag did not show", r.Phases["a"].PF, pfTrue)
	}
}

func ftoa(x float64) string { return strconv.FormatFloat(x, 'g', -1, 64) }

// TestCalibrateRefusals: readings that are not a calibration are usage
// errors naming the key. src: common practice, no source (a 30 % ratio
// error or a 20° angle is a wiring mistake).
func TestCalibrateRefusals(t *testing.T) {
	t.Parallel()
	dir := t.TempDir()
	x := site3{vp: 230, amps: 100, lag: 25}
	rec := writeRec(t, dir, "c.csv", 10240, 1.2, []sig{{"va", x.v(0)}, {"vb", x.v(1)}, {"vc", x.v(2)}, {"ia", x.i(0)}, {"ib", x.i(1)}, {"ic", x.i(2)}})
	cfg := writeFile(t, dir, "c.yaml", wyeWiringCfg)
	for _, c := range []struct{ ref, phrase string }{
		{"va=400", "wrong ratio"},
		{"pf_a=0.2", "wiring mistake"},
		{"vx=230", "unknown key"},
		{"va=230,va=231", "given twice"},
		{"pf_a=1.2", "at most 1"},
		{"va", "key=value"},
		{"pf_a=0.9,dpf_total=0.9", "give one of them"},
	} {
		res := runCmd("calibrate", "--config", cfg, "--seconds", "1", "--reference", c.ref, rec)
		if res.code != 2 || !strings.Contains(res.stderr, c.phrase) {
			t.Errorf("%s: exit %d, stderr %q, want 2 and %q", c.ref, res.code, res.stderr, c.phrase)
		}
	}
}
