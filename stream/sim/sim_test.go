package sim_test

import (
	"errors"
	"io"
	"math"
	"math/cmplx"
	"sync"
	"testing"
	"time"

	"github.com/gridloupe/gridloupe/metrics"
	"github.com/gridloupe/gridloupe/stream/sim"
)

// Tolerances.
const (
	// ratioTol is the acceptance figure (common practice, no source) for generated Ih/I1 versus
	// Truth (relative); the exact DFT of exact-bin tones should do far better.
	ratioTol = 0.005
	// exactTol bounds relative round-off of the phasor-rotation recurrence
	// over a block of 256 samples (float64, a few hundred operations).
	exactTol = 1e-9
	// noiseRMSTol is the relative error allowed on a measured noise σ over
	// 20480 samples (sampling error of a variance estimate ≈ 1/√(2N) = 0.5 %).
	noiseRMSTol = 0.03
)

// Channel indices of DefaultChannels.
const (
	chVA, chVB, chVC, chIA, chIB, chIC, chIN = 0, 1, 2, 3, 4, 5, 6
	nDefault                                 = 7
)

// window10 is 10 cycles of 50 Hz at 10.24 kHz.
const window10 = 2048

func TestIdealHarmonicsMatchTruth(t *testing.T) {
	larkfield := idealConfig()
	larkfield.SampleRate, larkfield.FrequencyHz, larkfield.VoltageV = 12800, 60, 277
	larkfield.IscA, larkfield.ILA = 0, 0 // defaults from VoltageV
	cases := []struct {
		name        string
		cfg         sim.Config
		cycles, n   int
		load, cond  float64
		src         string
		wantI5Range [2]float64 // plausibility band of I5/I1, %
	}{
		{name: "north-weir healthy full load", cfg: idealConfig(), cycles: 10, n: window10, load: 1, cond: 1,
			wantI5Range: [2]float64{30, 35}, src: "invented scenario, DESIGN, Scenario for demo data and examples: healthy 3 % reactor, I5/I1 ≈ 30–35 % at full load (from memory)"},
		{name: "north-weir healthy light load", cfg: idealConfig(), cycles: 10, n: window10, load: 0.3, cond: 1,
			wantI5Range: [2]float64{35, 60}, src: "invented scenario, DESIGN, Scenario for demo data and examples: ratios rise at light load (from memory)"},
		{name: "north-weir no reactor effect", cfg: idealConfig(), cycles: 10, n: window10, load: 1, cond: 0,
			wantI5Range: [2]float64{60, 80}, src: "invented scenario, DESIGN, Scenario for demo data and examples: no-reactor levels I5/I1 ≈ 60–80 % (from memory)"},
		{name: "north-weir half degraded", cfg: idealConfig(), cycles: 10, n: window10, load: 0.6, cond: 0.5,
			wantI5Range: [2]float64{30, 80}, src: "between the two bands above"},
		{name: "larkfield 60 Hz healthy", cfg: larkfield, cycles: 12, n: 2560, load: 0.8, cond: 1,
			wantI5Range: [2]float64{30, 40}, src: "the bands above, 60 Hz"},
	}
	for _, tc := range cases {
		t.Run(tc.name, func(t *testing.T) {
			t.Parallel()
			s := newSource(t, tc.cfg)
			s.SetLoad(tc.load)
			s.SetFilterCondition(tc.cond)
			buf := readFrames(t, s, nDefault, tc.n, 1000)
			tr := s.Truth()
			if tr.Load != tc.load || tr.Condition != tc.cond {
				t.Fatalf("truth load %v cond %v, want %v %v", tr.Load, tr.Condition, tc.load, tc.cond)
			}
			if tr.IhPct[5] < tc.wantI5Range[0] || tr.IhPct[5] > tc.wantI5Range[1] {
				t.Errorf("model I5/I1 = %.2f %%, want in %v (%s)", tr.IhPct[5], tc.wantI5Range, tc.src)
			}
			for _, ch := range []struct {
				idx  int
				name string
				pct  [51]float64
				fund float64
			}{{chIA, "ia", tr.IhPct, tr.I1}, {chVA, "va", tr.VhPct, tr.V1}} {
				m := spectrum(column(buf, nDefault, ch.idx), tc.cycles)
				// Source: the exact DFT of whole cycles (definition) against the
				// model's own Truth.
				if math.Abs(m[1]-ch.fund) > exactTol*ch.fund {
					t.Errorf("%s fundamental %.9g, want %.9g", ch.name, m[1], ch.fund)
				}
				for h := 2; h <= 50; h++ {
					got := 100 * m[h] / m[1]
					want := ch.pct[h]
					if want == 0 {
						if got > 100*exactTol {
							t.Errorf("%s h%d = %.3g %%, want 0 (order not generated)", ch.name, h, got)
						}
						continue
					}
					if math.Abs(got-want) > ratioTol*want {
						t.Errorf("%s h%d = %.6f %%, truth %.6f %%", ch.name, h, got, want)
					}
				}
			}
			// DPF from the fundamental phasors (IEEE 1459: cos θ1).
			v1 := dft(column(buf, nDefault, chVA), tc.cycles)
			i1 := dft(column(buf, nDefault, chIA), tc.cycles)
			dpf := math.Cos(cmplx.Phase(v1) - cmplx.Phase(i1))
			if math.Abs(dpf-tr.DPF) > exactTol {
				t.Errorf("DPF %.9f, truth %.9f", dpf, tr.DPF)
			}
			if cmplx.Phase(i1) >= cmplx.Phase(v1) {
				t.Errorf("current leads voltage: %v vs %v rad; want lagging (invented scenario, DESIGN, Scenario)", cmplx.Phase(i1), cmplx.Phase(v1))
			}
			if tr.DPF < 0.97 || tr.DPF > 0.99 {
				t.Errorf("DPF %v outside 0.97..0.99 (invented scenario, DESIGN, Scenario)", tr.DPF)
			}
		})
	}
}

// TestVoltageTHDRisesAsFilterDegrades checks the model property that voltage
// distortion follows current distortion (Vh = h·X·Ih; common practice, no
// source): measured THD_V strictly increases as the condition falls.
func TestVoltageTHDRisesAsFilterDegrades(t *testing.T) {
	t.Parallel()
	prev := -1.0
	for _, cond := range []float64{1, 0.8, 0.6, 0.4, 0.2, 0} {
		s := newSource(t, idealConfig())
		s.SetLoad(0.85)
		s.SetFilterCondition(cond)
		buf := readFrames(t, s, nDefault, window10, window10)
		m := spectrum(column(buf, nDefault, chVA), 10)
		thd := 100 * hsum(m) / m[1]
		tr := s.Truth()
		if math.Abs(thd-tr.THDVPct) > ratioTol*tr.THDVPct {
			t.Errorf("cond %.1f: THD_V %.4f %%, truth %.4f %%", cond, thd, tr.THDVPct)
		}
		if thd <= prev {
			t.Errorf("cond %.1f: THD_V %.4f %% not above %.4f %% at the healthier condition", cond, thd, prev)
		}
		prev = thd
	}
}

// TestCurrentTHDFallsTDDRisesWithLoad checks the model property that THD_I
// falls with load while TDD = THD_I·I1/IL rises (IEEE 519's reason for TDD;
// model property, common practice, no source).
func TestCurrentTHDFallsTDDRisesWithLoad(t *testing.T) {
	t.Parallel()
	for _, cond := range []float64{1, 0.4, 0} {
		prevTHD, prevTDD := math.Inf(1), -1.0
		for _, load := range []float64{0.1, 0.2, 0.3, 0.5, 0.7, 0.9, 1.0, 1.2} {
			s := newSource(t, idealConfig())
			s.SetLoad(load)
			s.SetFilterCondition(cond)
			buf := readFrames(t, s, nDefault, window10, window10)
			m := spectrum(column(buf, nDefault, chIB), 10)
			thd := 100 * hsum(m) / m[1]
			tdd := 100 * hsum(m) / 160 // IL = 160 A, North Weir
			tr := s.Truth()
			if math.Abs(tdd-tr.TDDPct) > ratioTol*tr.TDDPct {
				t.Errorf("cond %v load %v: TDD %.4f %%, truth %.4f %%", cond, load, tdd, tr.TDDPct)
			}
			if thd >= prevTHD || tdd <= prevTDD {
				t.Errorf("cond %v load %v: THD_I %.3f %% (prev %.3f), TDD %.3f %% (prev %.3f): want THD falling, TDD rising",
					cond, load, thd, prevTHD, tdd, prevTDD)
			}
			prevTHD, prevTDD = thd, tdd
		}
	}
}

func TestSequenceOfHarmonics(t *testing.T) {
	t.Parallel()
	s := newSource(t, idealConfig())
	s.SetLoad(0.9)
	buf := readFrames(t, s, nDefault, window10, window10)
	cases := []struct {
		h    int
		want string
		src  string
	}{
		{1, "pos", "closed form: h ≡ 1 (mod 3) positive sequence"},
		{5, "neg", "closed form: h ≡ 2 (mod 3) negative sequence, 5th negative"},
		{7, "pos", "closed form: 7th positive"},
		{11, "neg", "closed form: h ≡ 2 (mod 3) negative"},
		{13, "pos", "closed form: h ≡ 1 (mod 3) positive"},
		{3, "zero", "closed form: triplens zero sequence"},
	}
	for _, base := range []struct {
		name    string
		a, b, c int
	}{{"current", chIA, chIB, chIC}, {"voltage", chVA, chVB, chVC}} {
		for _, tc := range cases {
			xa := dft(column(buf, nDefault, base.a), 10*tc.h)
			xb := dft(column(buf, nDefault, base.b), 10*tc.h)
			xc := dft(column(buf, nDefault, base.c), 10*tc.h)
			pos, neg, zero := fortescue(xa, xb, xc)
			got := metrics.Seq{Pos: pos, Neg: neg, Zero: zero}.Dominant()
			total := pos + neg + zero
			others := total - max(pos, neg, zero)
			if got != tc.want || others > exactTol*total {
				t.Errorf("%s h%d: pos %.4g neg %.4g zero %.4g, want pure %s (%s)", base.name, tc.h, pos, neg, zero, tc.want, tc.src)
			}
		}
	}
}

func TestNeutralIsSumOfPhases(t *testing.T) {
	t.Parallel()
	s := newSource(t, idealConfig())
	s.SetLoad(0.7)
	buf := readFrames(t, s, nDefault, window10, 500)
	for i := 0; i < window10; i++ {
		f := buf[i*nDefault:]
		sum := f[chIA] + f[chIB] + f[chIC]
		if math.Abs(f[chIN]-sum) > exactTol*160 {
			t.Fatalf("frame %d: in %.9g, ia+ib+ic %.9g (KCL)", i, f[chIN], sum)
		}
	}
	m := spectrum(column(buf, nDefault, chIN), 10)
	// 2 A of 3rd from single-phase loads (invented scenario); every
	// non-triplen order cancels in a balanced set (closed form).
	if math.Abs(m[3]-2) > exactTol*2 {
		t.Errorf("neutral 3rd %.9g A, want 2 A (invented scenario, DESIGN, Scenario)", m[3])
	}
	if m[1] > exactTol*160 || m[5] > exactTol*160 {
		t.Errorf("neutral h1 %.3g A h5 %.3g A, want 0 (balanced non-triplens cancel)", m[1], m[5])
	}
}

// TestFramesInterleavedAndRaw: channels come in the configured order and
// engineering = raw·scale + offset (DESIGN, config contract).
func TestFramesInterleavedAndRaw(t *testing.T) {
	t.Parallel()
	const n = 1000
	t.Run("permuted order", func(t *testing.T) {
		t.Parallel()
		ref := readFrames(t, newSource(t, idealConfig()), nDefault, n, 333)
		cfg := idealConfig()
		perm := []int{chIN, chVC, chIA, chVA, chIC, chVB, chIB}
		cfg.Channels = nil
		def := sim.DefaultChannels()
		for _, p := range perm {
			cfg.Channels = append(cfg.Channels, def[p])
		}
		got := readFrames(t, newSource(t, cfg), nDefault, n, 333)
		for i := 0; i < n; i++ {
			for j, p := range perm {
				if g, w := got[i*nDefault+j], ref[i*nDefault+p]; g != w {
					t.Fatalf("frame %d slot %d (%s): %v, want %v", i, j, def[p].Name, g, w)
				}
			}
		}
	})
	t.Run("scale and offset, with noise", func(t *testing.T) {
		t.Parallel()
		cfg := idealConfig()
		cfg.NoNoise = false
		ref := readFrames(t, newSource(t, cfg), nDefault, n, 256)
		scales := []float64{0.01, -2, 0.5, 1.0 / 32768, 3, 7, 1}
		offsets := []float64{0.5, -1, 0, 2.5, 0, -100, 0}
		for i := range cfg.Channels {
			cfg.Channels[i].Scale, cfg.Channels[i].Offset = scales[i], offsets[i]
		}
		got := readFrames(t, newSource(t, cfg), nDefault, n, 256)
		for i := 0; i < n; i++ {
			for c := range nDefault {
				eng := got[i*nDefault+c]*scales[c] + offsets[c]
				w := ref[i*nDefault+c]
				if math.Abs(eng-w) > exactTol*math.Max(1, math.Abs(w)) {
					t.Fatalf("frame %d channel %d: raw·scale+offset %v, want %v", i, c, eng, w)
				}
			}
		}
	})
}

func TestLimitEOF(t *testing.T) {
	t.Parallel()
	cfg := idealConfig()
	cfg.Limit = 1000
	s := newSource(t, cfg)
	buf := make([]float64, 300*nDefault)
	var counts []int
	var err error
	for range 10 {
		var k int
		k, err = s.ReadFrames(buf)
		if k > 0 {
			counts = append(counts, k)
		}
		if err != nil {
			break
		}
	}
	want := []int{300, 300, 300, 100}
	if len(counts) != len(want) || !errors.Is(err, io.EOF) {
		t.Fatalf("counts %v err %v, want %v then io.EOF", counts, err, want)
	}
	for i := range want {
		if counts[i] != want[i] {
			t.Fatalf("counts %v, want %v", counts, want)
		}
	}
	if got := s.SampleIndex(); got != 1000 {
		t.Errorf("SampleIndex %d, want 1000", got)
	}
	if k, err := s.ReadFrames(buf); k != 0 || !errors.Is(err, io.EOF) {
		t.Errorf("after EOF: %d, %v; want 0, io.EOF", k, err)
	}
}

func TestReadFramesEdgeCases(t *testing.T) {
	t.Parallel()
	s := newSource(t, idealConfig())
	if k, err := s.ReadFrames(nil); k != 0 || err != nil {
		t.Errorf("empty dst: %d, %v; want 0, nil (io.Reader rules)", k, err)
	}
	if _, err := s.ReadFrames(make([]float64, nDefault-1)); !errors.Is(err, io.ErrShortBuffer) {
		t.Errorf("dst shorter than a frame: %v, want io.ErrShortBuffer", err)
	}
	// A partial trailing frame is left untouched.
	buf := make([]float64, 2*nDefault+3)
	for i := range buf {
		buf[i] = -1
	}
	if k, err := s.ReadFrames(buf); k != 2 || err != nil {
		t.Fatalf("ReadFrames: %d, %v; want 2 frames", k, err)
	}
	for _, v := range buf[2*nDefault:] {
		if v != -1 {
			t.Fatalf("tail written: %v", buf[2*nDefault:])
		}
	}
	// One frame per call gives the same samples as large calls.
	a := readFrames(t, newSource(t, sim.DefaultConfig()), nDefault, 700, 1)
	b := readFrames(t, newSource(t, sim.DefaultConfig()), nDefault, 700, 700)
	for i := range a {
		if a[i] != b[i] {
			t.Fatalf("value %d: one-frame calls %v, block call %v", i, a[i], b[i])
		}
	}
}

func TestSeedReproducible(t *testing.T) {
	t.Parallel()
	cfg := sim.DefaultConfig()
	cfg.Seed = 42
	a := readFrames(t, newSource(t, cfg), nDefault, 3000, 512)
	b := readFrames(t, newSource(t, cfg), nDefault, 3000, 700)
	cfg.Seed = 43
	c := readFrames(t, newSource(t, cfg), nDefault, 3000, 512)
	same, diff := true, 0
	for i := range a {
		same = same && a[i] == b[i]
		if a[i] != c[i] {
			diff++
		}
	}
	if !same {
		t.Error("same seed gave different samples")
	}
	if diff < len(a)/2 {
		t.Errorf("seeds 42 and 43 differ in only %d of %d samples", diff, len(a))
	}
}

func TestNoiseLevel(t *testing.T) {
	t.Parallel()
	cfg := idealConfig()
	cfg.NoNoise = false
	const n = 10 * window10
	noisy := readFrames(t, newSource(t, cfg), nDefault, n, 4096)
	clean := readFrames(t, newSource(t, idealConfig()), nDefault, n, 4096)
	for _, c := range []struct {
		idx  int
		want float64
	}{{chVA, 0.0005 * 230}, {chIC, 0.0005 * 160}} { // sim package doc: 0.05 % of nominal
		var ss float64
		for i := 0; i < n; i++ {
			d := noisy[i*nDefault+c.idx] - clean[i*nDefault+c.idx]
			ss += d * d
		}
		if got := math.Sqrt(ss / n); math.Abs(got-c.want) > noiseRMSTol*c.want {
			t.Errorf("channel %d noise σ %.5g, want %.5g (sim package doc: 0.05 %% of nominal)", c.idx, got, c.want)
		}
	}
}

// fakeClock is an injected wall clock whose Sleep advances it.
type fakeClock struct {
	mu     sync.Mutex
	now    time.Time
	sleeps int
}

func (c *fakeClock) Now() time.Time { c.mu.Lock(); defer c.mu.Unlock(); return c.now }
func (c *fakeClock) Sleep(d time.Duration) {
	c.mu.Lock()
	defer c.mu.Unlock()
	c.now = c.now.Add(d)
	c.sleeps++
}

func TestPacing(t *testing.T) {
	t.Parallel()
	clk := &fakeClock{now: time.Date(2026, 3, 1, 10, 0, 0, 0, time.UTC)}
	cfg := idealConfig()
	cfg.Speed = 60
	cfg.Now, cfg.Sleep = clk.Now, clk.Sleep
	cfg.Channels = cfg.Channels[:1] // pacing does not depend on the channels
	s := newSource(t, cfg)
	start := clk.Now()
	const chunk = 4096
	buf := make([]float64, chunk)
	const frames = 60 * 10240 // 60 s of simulated time
	calls := 0
	for got := 0; got < frames; calls++ {
		k, err := s.ReadFrames(buf[:min(chunk, frames-got)])
		if err != nil {
			t.Fatal(err)
		}
		got += k
	}
	// 60 s at Speed 60 take 1 s of wall time (invented scenario, DESIGN, Scenario).
	if el := clk.Now().Sub(start); el != time.Second {
		t.Errorf("60 s of samples took %v of injected wall time, want 1s", el)
	}
	if clk.sleeps > calls {
		t.Errorf("%d sleeps in %d calls, want at most one per call", clk.sleeps, calls)
	}
	// A slow reader is not made to sleep: jump the clock ahead by 10 s.
	clk.Sleep(10 * time.Second)
	before := clk.sleeps
	for range 50 {
		if _, err := s.ReadFrames(buf); err != nil {
			t.Fatal(err)
		}
	}
	if clk.sleeps != before {
		t.Errorf("reader 10 s behind was made to sleep %d times", clk.sleeps-before)
	}
}

func TestDips(t *testing.T) {
	t.Parallel()
	cfg := idealConfig()
	cfg.Dips = []sim.Dip{{At: 100 * time.Millisecond, Depth: 0.4, Duration: 60 * time.Millisecond, Phases: "a"}}
	s := newSource(t, cfg)
	buf := readFrames(t, s, nDefault, 4096, 1000)
	va, vb := column(buf, nDefault, chVA), column(buf, nDefault, chVB)
	clean := column(readFrames(t, newSource(t, idealConfig()), nDefault, 4096, 4096), nDefault, chVA)
	start, end := 1024, 1024+614 // 0.1 s and 0.16 s at 10.24 kHz, rounded
	for i := range va {
		want := clean[i]
		if i >= start && i < end {
			want *= 0.4
		}
		if math.Abs(va[i]-want) > exactTol*230 {
			t.Fatalf("va[%d] = %v, want %v (dip %d..%d)", i, va[i], want, start, end)
		}
	}
	// Unlisted phase untouched: RMS of one cycle in the dip is nominal.
	var ss float64
	for _, v := range vb[start : start+204] {
		ss += v * v
	}
	if rms := math.Sqrt(ss / 204); math.Abs(rms-230) > 0.1*230 {
		t.Errorf("vb RMS in the dip %.1f V, want about 230 V", rms)
	}
}

// TestFilterProfile: the documented raised-cosine profile, c(t) = 1 − (1 −
// Worst)(1 − cos 2πt/Period)/2 (closed form of the package doc).
func TestFilterProfile(t *testing.T) {
	t.Parallel()
	cfg := idealConfig()
	cfg.Filter = sim.FilterProfile{Period: 2 * time.Second, Worst: 0.2}
	s := newSource(t, cfg)
	s.SetLoad(0.8)
	buf := make([]float64, sim.BlockLen*nDefault)
	want := map[uint64]float64{0: 1, 5120: 0.6, 10240: 0.2, 15360: 0.6, 20480: 1}
	var thd0, thdWorst float64
	for n := uint64(0); n <= 20480; n += sim.BlockLen {
		if w, ok := want[n]; ok {
			tr := s.Truth()
			if tr.SampleIndex != n || math.Abs(tr.Condition-w) > exactTol {
				t.Errorf("sample %d: truth index %d condition %.9f, want %v", n, tr.SampleIndex, tr.Condition, w)
			}
			switch n {
			case 0:
				thd0 = tr.THDIPct
			case 10240:
				thdWorst = tr.THDIPct
			}
		}
		if _, err := s.ReadFrames(buf); err != nil {
			t.Fatal(err)
		}
	}
	if thdWorst <= thd0 {
		t.Errorf("THD_I at the worst condition %.2f %% not above healthy %.2f %%", thdWorst, thd0)
	}
	// The override wins, and NaN hands back to the profile.
	s.SetFilterCondition(0.05)
	if _, err := s.ReadFrames(buf); err != nil {
		t.Fatal(err)
	}
	if c := s.Truth().Condition; c != 0.05 {
		t.Errorf("override: condition %v, want 0.05", c)
	}
	s.SetFilterCondition(math.NaN())
	if _, err := s.ReadFrames(buf); err != nil {
		t.Fatal(err)
	}
	if c := s.Truth().Condition; c == 0.05 || c < 0.2 || c > 1 {
		t.Errorf("after NaN: condition %v, want the profile's", c)
	}
}

// TestFrequencyFollowsTruth: with wander on, the generated waveform's mean
// frequency over 10 s (rising zero crossings, linear interpolation) equals
// the mean of the per-block Truth frequencies.
func TestFrequencyFollowsTruth(t *testing.T) {
	t.Parallel()
	cfg := idealConfig()
	cfg.NoWander = false
	cfg.Channels = cfg.Channels[:1]
	cfg.Seed = 7
	s := newSource(t, cfg)
	const blocks = 400 // 10 s
	buf := make([]float64, blocks*sim.BlockLen)
	var sumF float64
	for b := range blocks {
		sumF += s.Truth().FreqHz
		if _, err := s.ReadFrames(buf[b*sim.BlockLen : (b+1)*sim.BlockLen]); err != nil {
			t.Fatal(err)
		}
	}
	meanTruth := sumF / blocks
	var first, last float64
	cycles := -1
	for i := 1; i < len(buf); i++ {
		if buf[i-1] < 0 && buf[i] >= 0 {
			tc := float64(i-1) + buf[i-1]/(buf[i-1]-buf[i])
			if cycles < 0 {
				first = tc
			}
			last = tc
			cycles++
		}
	}
	meas := float64(cycles) * 10240 / (last - first)
	// freqTol: crossing interpolation error on a 50 Hz sine at 10.24 kHz is
	// below 1e-4 sample; over 10 s that is far below 1 mHz.
	const freqTol = 0.001
	if math.Abs(meas-meanTruth) > freqTol {
		t.Errorf("measured %.5f Hz, truth mean %.5f Hz", meas, meanTruth)
	}
	if math.Abs(meanTruth-50) < 0.002 || math.Abs(meanTruth-50) > 0.05 {
		t.Errorf("truth mean %.5f Hz: want a visible wander within ±0.05 Hz (invented scenario, DESIGN, Scenario)", meanTruth)
	}
}

func TestConcurrentControl(t *testing.T) {
	t.Parallel()
	s := newSource(t, sim.DefaultConfig())
	var wg sync.WaitGroup
	wg.Add(1)
	go func() {
		defer wg.Done()
		for i := range 200 {
			s.SetFilterCondition(float64(i%10) / 10)
			s.SetLoad(float64(i%7) / 7)
			_ = s.Truth()
			_ = s.SampleIndex()
		}
	}()
	buf := make([]float64, 64*nDefault)
	for range 200 {
		if _, err := s.ReadFrames(buf); err != nil {
			t.Fatal(err)
		}
	}
	wg.Wait()
	if got := s.SampleIndex(); got != 200*64 {
		t.Errorf("SampleIndex %d, want %d", got, 200*64)
	}
}

func TestNewRejects(t *testing.T) {
	t.Parallel()
	chans := func(mod func([]sim.Chan)) []sim.Chan { c := sim.DefaultChannels(); mod(c); return c }
	cases := []struct {
		name string
		mod  func(*sim.Config)
	}{
		{"sample rate too low", func(c *sim.Config) { c.SampleRate = 900 }},
		{"sample rate NaN", func(c *sim.Config) { c.SampleRate = math.NaN() }},
		{"frequency 30", func(c *sim.Config) { c.FrequencyHz = 30 }},
		{"negative voltage", func(c *sim.Config) { c.VoltageV = -230 }},
		{"Isc below IL", func(c *sim.Config) { c.IscA = 100 }},
		{"IL infinite", func(c *sim.Config) { c.ILA = math.Inf(1) }},
		{"negative speed", func(c *sim.Config) { c.Speed = -1 }},
		{"worst above 1", func(c *sim.Config) { c.Filter.Worst = 1.5 }},
		{"negative period", func(c *sim.Config) { c.Filter.Period = -time.Second }},
		{"no channels", func(c *sim.Config) { c.Channels = []sim.Chan{} }},
		{"duplicate name", func(c *sim.Config) { c.Channels = chans(func(c []sim.Chan) { c[1].Name = "va" }) }},
		{"empty name", func(c *sim.Config) { c.Channels = chans(func(c []sim.Chan) { c[1].Name = "" }) }},
		{"neutral voltage", func(c *sim.Config) { c.Channels = chans(func(c []sim.Chan) { c[0].Phase = 'n' }) }},
		{"phase x", func(c *sim.Config) { c.Channels = chans(func(c []sim.Chan) { c[3].Phase = 'x' }) }},
		{"kind 0", func(c *sim.Config) { c.Channels = chans(func(c []sim.Chan) { c[3].Kind = 0 }) }},
		{"scale Inf", func(c *sim.Config) { c.Channels = chans(func(c []sim.Chan) { c[3].Scale = math.Inf(-1) }) }},
		{"dip depth 2.5 (swells reach 2)", func(c *sim.Config) { c.Dips = []sim.Dip{{Depth: 2.5, Duration: time.Second}} }},
		{"dip zero duration", func(c *sim.Config) { c.Dips = []sim.Dip{{Depth: 0.5}} }},
		{"dip phase n", func(c *sim.Config) { c.Dips = []sim.Dip{{Depth: 0.5, Duration: time.Second, Phases: "an"}} }},
	}
	for _, tc := range cases {
		cfg := sim.DefaultConfig()
		tc.mod(&cfg)
		if _, err := sim.New(cfg); !errors.Is(err, sim.ErrConfig) {
			t.Errorf("%s: err %v, want ErrConfig", tc.name, err)
		}
	}
	// The zero Config is valid: North Weir defaults.
	s, err := sim.New(sim.Config{})
	if err != nil {
		t.Fatalf("zero Config: %v", err)
	}
	if tr := s.Truth(); tr.IL != 160 || math.Abs(tr.Isc-6100) > 1e-9 || tr.V1 != 230 {
		t.Errorf("zero Config defaults IL %v Isc %v V %v, want 160, 6100, 230 (North Weir)", tr.IL, tr.Isc, tr.V1)
	}
}

// TestShareScalesCurrent: a current channel with Share s carries s times
// the load current of its phase, sample by sample (Chan.Share doc; the
// several-circuit bus of README "Circuits" is built from it), and a
// voltage channel ignores Share. Exact: a share of 0.25 is a power of two,
// so every product and sum of the model scales without rounding (closed
// form; measured: no difference in any sample).
func TestShareScalesCurrent(t *testing.T) {
	t.Parallel()
	cfg := idealConfig()
	cfg.Channels = append(sim.DefaultChannels(),
		sim.Chan{Name: "ia-drive", Kind: metrics.Current, Phase: 'a', Share: 0.25},
		sim.Chan{Name: "va2", Kind: metrics.Voltage, Phase: 'a', Share: 0.25})
	const nch = nDefault + 2
	s := newSource(t, cfg)
	s.SetLoad(0.7)
	buf := readFrames(t, s, nch, window10, 500)
	for i := 0; i < window10; i++ {
		f := buf[i*nch:]
		if f[nDefault] != 0.25*f[chIA] {
			t.Fatalf("frame %d: ia-drive %.17g, a quarter of ia %.17g", i, f[nDefault], 0.25*f[chIA])
		}
		if f[nDefault+1] != f[chVA] {
			t.Fatalf("frame %d: va2 %.17g, va %.17g (Share is for currents)", i, f[nDefault+1], f[chVA])
		}
	}
}
