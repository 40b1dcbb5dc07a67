package sim

import (
	"fmt"
	"io"
	"math"
	"math/cmplx"
	"math/rand/v2"
	"sync"
	"sync/atomic"
	"time"

	"github.com/gridloupe/gridloupe/metrics"
)

// BlockLen is the number of samples between model updates: amplitudes,
// frequency, load, filter condition and Truth change only at multiples of
// BlockLen samples after sample 0.
const BlockLen = 256

// MaxOrder is the highest harmonic order the model generates (and the last
// index of Truth's per-order arrays): the highest order measured.
const MaxOrder = metrics.MaxOrder

// pcgStream is the second PCG word; Config.Seed is the first.
const pcgStream = 0x67726964 // "grid"

// noiseFrac is the noise standard deviation as a fraction of nominal.
const noiseFrac = 0.0005

// Truth is the model state of one block: what a perfect analyzer would
// report for it. Per-order arrays are indexed by
// order; orders the model does not generate (even orders, triplens other
// than the 3rd, orders above the Nyquist margin) are 0.
type Truth struct {
	SampleIndex uint64    // first sample of the block
	Time        time.Time // simulated wall time of that sample
	FreqHz      float64   // fundamental frequency
	Load        float64   // fraction of IL (phase-current fundamental I1 = Load·IL)
	Condition   float64   // reactor/filter condition: 1 healthy … 0 no effect
	DPF         float64   // displacement power factor, lagging
	V1          float64   // phase voltage fundamental RMS, V (dips not included)
	I1          float64   // phase current fundamental RMS, A
	IL          float64   // maximum demand load current, A
	Isc         float64   // short-circuit current at the PCC, A
	In          float64   // neutral current RMS, A (the 3rd from single-phase loads)
	Dip         bool      // a dip overlaps the block
	// IhPct is each order's phase-current RMS in percent of I1 (0 when
	// I1 is 0); IhPct[1] = 100.
	IhPct [MaxOrder + 1]float64
	// VhPct is each order's phase-voltage RMS in percent of V1 (dips
	// not included); VhPct[1] = 100.
	VhPct   [MaxOrder + 1]float64
	THDIPct float64 // phase current THD over orders 2..50, % of I1 (0 when I1 is 0)
	TDDPct  float64 // phase current TDD over orders 2..50, % of IL
	THDVPct float64 // phase voltage THD over orders 2..50, % of V1
}

type chanState struct {
	isV   bool
	phase int       // 0, 1, 2 for a, b, c; 3 for the neutral
	to    int       // line-to-line voltages: the second phase; −1 otherwise
	off   float64   // −Offset/Scale
	noise float64   // noise σ in raw units
	cr    []float64 // per order: real part of the peak phasor / Scale
	ci    []float64 // per order: imaginary part
}

type dipIdx struct {
	start, end uint64 // sample indices [start, end)
	depth      float64
	phases     [3]bool
}

// Source generates the frames of a simulated drive cabinet. ReadFrames is
// not safe for concurrent use (one goroutine owns the per-sample path);
// SetFilterCondition, SetLoad, Truth and SampleIndex are safe to call from
// any goroutine at any time.
type Source struct {
	cfg    Config
	fs     float64
	x      float64 // source reactance at the fundamental, Ω
	orders []int   // generated orders, ascending
	chans  []chanState
	zr, zi []float64 // e^{j·h·φ} at the current sample, per order
	rr, ri []float64 // per-sample rotator e^{j·h·ω}, per order
	gains  [3][]float64
	dips   []dipIdx
	rng    *rand.Rand
	s0     float64    // Start's seconds of day
	wph    [3]float64 // wander phases, rad

	n      uint64  // next sample index
	pos    int     // position in the current block
	phi    float64 // fundamental phase at the current block's first sample, rad
	dphi   float64 // phase advance over a whole block, rad
	dipBlk bool    // a dip overlaps the current block

	paced     bool
	wallStart time.Time

	condOverride atomic.Uint64 // math.Float64bits; NaN = profile
	loadOverride atomic.Uint64
	index        atomic.Uint64
	overrides    atomic.Uint64 // bumped by every Set call
	blockGen     uint64        // overrides seen when the current block was computed

	mu    sync.Mutex
	truth Truth
}

// New validates cfg, fills its defaults and returns a Source positioned at
// sample 0.
func New(cfg Config) (*Source, error) {
	cfg, err := normalize(cfg)
	if err != nil {
		return nil, err
	}
	s := &Source{cfg: cfg, fs: cfg.SampleRate, x: cfg.VoltageV / cfg.IscA}
	s.condOverride.Store(math.Float64bits(math.NaN()))
	s.loadOverride.Store(math.Float64bits(math.NaN()))

	// Orders that stay below the Nyquist frequency with margin for wander.
	fMax := cfg.FrequencyHz + 0.1
	for h := 1; h <= MaxOrder; h++ {
		if 2*float64(h)*fMax >= s.fs {
			break
		}
		if h == 1 || h == 3 || harmonicRatio(h, 1, 1) > 0 {
			s.orders = append(s.orders, h)
		}
	}
	no := len(s.orders)
	s.zr, s.zi = make([]float64, no), make([]float64, no)
	s.rr, s.ri = make([]float64, no), make([]float64, no)
	for p := range s.gains {
		s.gains[p] = make([]float64, BlockLen)
	}

	s.chans = make([]chanState, len(cfg.Channels))
	for i, c := range cfg.Channels {
		cs := chanState{isV: c.Kind == metrics.Voltage, off: -c.Offset / c.Scale,
			cr: make([]float64, no), ci: make([]float64, no)}
		if c.Phase == 'n' {
			cs.phase = 3
		} else {
			cs.phase = int(c.Phase - 'a')
		}
		cs.to = -1
		if cs.isV && c.To != 0 {
			cs.to = int(c.To - 'a')
		}
		nominal := cfg.ILA
		if cs.isV {
			nominal = cfg.VoltageV
		}
		if !cfg.NoNoise {
			cs.noise = noiseFrac * nominal / c.Scale // signed: the engineering noise is the same for any scale
		}
		s.chans[i] = cs
	}

	for _, d := range cfg.Dips {
		start := uint64(math.Round(d.At.Seconds() * s.fs))
		end := start + uint64(math.Max(1, math.Round(d.Duration.Seconds()*s.fs)))
		di := dipIdx{start: start, end: end, depth: d.Depth}
		for j := 0; j < len(d.Phases); j++ {
			di.phases[d.Phases[j]-'a'] = true
		}
		s.dips = append(s.dips, di)
	}

	s.rng = rand.New(rand.NewPCG(cfg.Seed, pcgStream))
	for i := range s.wph {
		s.wph[i] = 2 * math.Pi * s.rng.Float64()
	}
	s.s0 = secondsOfDay(cfg.Start)
	s.startBlock()
	return s, nil
}

// SetFilterCondition overrides the filter profile with condition c (clamped
// to [0, 1]; 1 = healthy) from the next block on; NaN returns to the
// profile. Safe for concurrent use.
func (s *Source) SetFilterCondition(c float64) {
	if !math.IsNaN(c) {
		c = math.Min(1, math.Max(0, c))
	}
	s.condOverride.Store(math.Float64bits(c))
	s.overrides.Add(1)
}

// SetLoad overrides the daily load profile with load l, a fraction of IL
// clamped to [0, 2], from the next block boundary on, like
// SetFilterCondition; NaN returns to the profile. Safe for concurrent use.
func (s *Source) SetLoad(l float64) {
	if !math.IsNaN(l) {
		l = math.Min(maxLoad, math.Max(0, l))
	}
	s.loadOverride.Store(math.Float64bits(l))
	s.overrides.Add(1)
}

// Truth returns the model state of the block that holds the next sample
// (SampleIndex). An override set since that block was computed shows from
// the next ReadFrames on. Safe for concurrent use.
func (s *Source) Truth() Truth {
	s.mu.Lock()
	defer s.mu.Unlock()
	return s.truth
}

// SampleIndex returns the number of frames produced so far (the index of
// the next sample). Safe for concurrent use.
func (s *Source) SampleIndex() uint64 { return s.index.Load() }

// ReadFrames fills dst with up to len(dst)/len(Channels) whole frames,
// interleaved in channel order, as raw values (engineering − Offset)/Scale.
// It follows io.Reader's rules: after Limit frames it returns 0, io.EOF.
// With Speed > 0 it sleeps (at most once per call) so that simulated time
// runs at Speed × wall time from the first call; a reader that falls behind
// gets frames without sleeping until it catches up. It allocates nothing.
func (s *Source) ReadFrames(dst []float64) (int, error) {
	if len(dst) == 0 {
		return 0, nil
	}
	nch := len(s.chans)
	want := len(dst) / nch
	if want == 0 {
		return 0, fmt.Errorf("sim: dst holds %d values, one frame needs %d: %w", len(dst), nch, io.ErrShortBuffer)
	}
	if lim := s.cfg.Limit; lim > 0 {
		if s.n >= lim {
			return 0, io.EOF
		}
		if rem := lim - s.n; uint64(want) > rem {
			want = int(rem)
		}
	}
	if s.cfg.Speed > 0 && !s.paced {
		s.paced, s.wallStart = true, s.cfg.Now()
	}
	for done := 0; done < want; {
		if s.pos == 0 && s.overrides.Load() != s.blockGen {
			// An override arrived since this block was computed.
			s.startBlock()
		}
		k := min(want-done, BlockLen-s.pos)
		s.generate(dst[done*nch:(done+k)*nch], k)
		s.pos += k
		s.n += uint64(k)
		done += k
		if s.pos == BlockLen {
			s.phi = math.Mod(s.phi+s.dphi, 2*math.Pi)
			s.pos = 0
			s.startBlock()
		}
	}
	s.index.Store(s.n)
	if s.cfg.Speed > 0 {
		target := time.Duration(float64(s.n) / s.fs / s.cfg.Speed * float64(time.Second))
		if d := target - s.cfg.Now().Sub(s.wallStart); d > 0 {
			s.cfg.Sleep(d)
		}
	}
	return want, nil
}

// generate writes k frames starting at the current sample.
func (s *Source) generate(dst []float64, k int) {
	no := len(s.orders)
	zr, zi := s.zr[:no], s.zi[:no]
	rr, ri := s.rr[:len(zr)], s.ri[:len(zr)]
	dip, rng := s.dipBlk, s.rng
	i := 0
	for j := 0; j < k; j++ {
		for c := range s.chans {
			ch := &s.chans[c]
			cr, ci := ch.cr[:len(zr)], ch.ci[:len(zr)]
			// Two independent sums shorten the add dependency chain.
			var vr, vi float64
			for o := range zr {
				vr += cr[o] * zr[o]
				vi += ci[o] * zi[o]
			}
			v := vr - vi
			if dip && ch.isV {
				v *= s.gains[ch.phase][s.pos+j]
			}
			if ch.noise != 0 {
				v += ch.noise * rng.NormFloat64()
			}
			dst[i] = v + ch.off
			i++
		}
		for o := range zr {
			a, b := zr[o], zi[o]
			zr[o] = a*rr[o] - b*ri[o]
			zi[o] = a*ri[o] + b*rr[o]
		}
	}
}

// startBlock recomputes the model for the block starting at sample s.n
// (s.pos == 0) with fundamental phase s.phi: the block's conditions, each
// order's phasors on every channel, the dip gains, and the Truth of it all.
func (s *Source) startBlock() {
	cfg := &s.cfg
	s.blockGen = s.overrides.Load()
	t := float64(s.n) / s.fs

	f, load, cond := s.conditions(t)
	w := 2 * math.Pi * f / s.fs
	s.dphi = w * BlockLen

	var tr Truth
	tr.SampleIndex, tr.FreqHz, tr.Load, tr.Condition = s.n, f, load, cond
	tr.Time = cfg.Start.Add(s.offset(s.n))
	tr.DPF = dpfAt(load)
	tr.V1, tr.I1, tr.IL, tr.Isc = cfg.VoltageV, load*cfg.ILA, cfg.ILA, cfg.IscA
	tr.In = cfg.NeutralI3A

	// Phase-a RMS phasors per order, at the block's reference (φ = 0).
	lag := math.Acos(tr.DPF)
	var sumI2, sumV2 float64
	for o, h := range s.orders {
		ih, vh := s.orderPhasors(h, lag, load, cond, tr.I1)
		if h > 1 {
			sumI2 += real(ih)*real(ih) + imag(ih)*imag(ih)
			sumV2 += real(vh)*real(vh) + imag(vh)*imag(vh)
		}
		if tr.I1 > 0 {
			tr.IhPct[h] = 100 * cmplx.Abs(ih) / tr.I1
		}
		tr.VhPct[h] = 100 * cmplx.Abs(vh) / cfg.VoltageV
		s.setChannelPhasors(o, h, ih, vh)

		hf := float64(h)
		sn, cs := math.Sincos(hf * s.phi)
		s.zr[o], s.zi[o] = cs, sn
		sn, cs = math.Sincos(hf * w)
		s.rr[o], s.ri[o] = cs, sn
	}
	if tr.I1 > 0 {
		tr.THDIPct = 100 * math.Sqrt(sumI2) / tr.I1
	}
	tr.TDDPct = 100 * math.Sqrt(sumI2) / cfg.ILA
	tr.THDVPct = 100 * math.Sqrt(sumV2) / cfg.VoltageV

	s.dipGains()
	tr.Dip = s.dipBlk

	s.mu.Lock()
	s.truth = tr
	s.mu.Unlock()
}

// conditions returns the fundamental frequency, the load (fraction of IL)
// and the filter condition at t seconds after sample 0: the profiles, unless
// SetLoad or SetFilterCondition overrides them.
func (s *Source) conditions(t float64) (f, load, cond float64) {
	f = s.cfg.FrequencyHz
	if !s.cfg.NoWander {
		f += wanderHz(t, s.wph)
	}
	load = math.Float64frombits(s.loadOverride.Load())
	if math.IsNaN(load) {
		load = loadAtHour((s.s0 + t) / 3600)
	}
	cond = math.Float64frombits(s.condOverride.Load())
	if math.IsNaN(cond) {
		cond = conditionAt(s.cfg.Filter, t)
	}
	return f, load, cond
}

// orderPhasors returns phase a's current and voltage RMS phasors of order h
// at the block's reference (φ = 0), for a fundamental current i1 lagging by
// lag rad: the drive's characteristic harmonics (5th, 11th, … reversed), the
// neutral's 3rd shared by the phases, the voltage drop of each current
// harmonic across the source reactance, and the background 5th.
func (s *Source) orderPhasors(h int, lag, load, cond, i1 float64) (ih, vh complex128) {
	cfg := &s.cfg
	hf := float64(h)
	switch {
	case h == 1:
		ih = cmplx.Rect(i1, -lag)
	case h == 3:
		ih = complex(cfg.NeutralI3A/3, 0)
	default:
		ang := -hf * lag
		if h%6 == 5 {
			ang += math.Pi
		}
		ih = cmplx.Rect(harmonicRatio(h, load, cond)*i1, ang)
	}
	vh = complex(cfg.VoltageV, 0)
	if h > 1 {
		vh = complex(0, -hf*s.x) * ih
		if h == 5 {
			// Background 5th in the direction of the local drop.
			ang := -hf*lag + math.Pi - math.Pi/2
			vh += cmplx.Rect(backgroundV5*cfg.VoltageV, ang)
		}
	}
	return ih, vh
}

// setChannelPhasors stores order h (index o in s.orders) of every channel as
// a peak phasor in raw units, from phase a's current ih and voltage vh: each
// phase shifted by its sequence, line-to-line voltages as the difference of
// two phases, the neutral as the sum of the three phase currents, and a
// current channel scaled by its share of the phase current.
func (s *Source) setChannelPhasors(o, h int, ih, vh complex128) {
	for c := range s.chans {
		ch := &s.chans[c]
		cc := &s.cfg.Channels[c]
		var p complex128
		switch {
		case ch.phase == 3:
			for ph := range 3 {
				p += ih * phaseShift(h, ph)
			}
		case ch.isV && ch.to >= 0:
			p = vh * (phaseShift(h, ch.phase) - phaseShift(h, ch.to))
		case ch.isV:
			p = vh * phaseShift(h, ch.phase)
		default:
			p = ih * phaseShift(h, ch.phase)
		}
		if !ch.isV {
			p *= complex(cc.Share, 0)
		}
		p *= complex(math.Sqrt2/cc.Scale, 0)
		ch.cr[o], ch.ci[o] = real(p), imag(p)
	}
}

// dipGains sets s.dipBlk and, when a dip or swell overlaps the block, each
// phase's voltage gain per sample of it, sample-accurate: where events
// overlap, the deepest dip or the highest swell wins.
func (s *Source) dipGains() {
	s.dipBlk = false
	end := s.n + BlockLen
	for _, d := range s.dips {
		if d.start >= end || d.end <= s.n {
			continue
		}
		if !s.dipBlk {
			s.dipBlk = true
			for p := range s.gains {
				for j := range s.gains[p] {
					s.gains[p][j] = 1
				}
			}
		}
		lo := int(max(d.start, s.n) - s.n)
		hi := int(min(d.end, end) - s.n)
		for p := range 3 {
			if !d.phases[p] {
				continue
			}
			g := s.gains[p][lo:hi]
			for j := range g {
				if d.depth > 1 { // a swell: the highest overlapping gain wins
					g[j] = math.Max(g[j], d.depth)
				} else { // a dip: the deepest wins
					g[j] = math.Min(g[j], d.depth)
				}
			}
		}
	}
}

// offset returns the simulated time of sample n after sample 0, by quotient
// and remainder when the sample rate is a whole number (exact for any n),
// else in float64.
func (s *Source) offset(n uint64) time.Duration {
	if fi := uint64(s.fs); float64(fi) == s.fs {
		q, r := n/fi, n%fi
		return time.Duration(q)*time.Second + time.Duration(float64(r)*1e9/s.fs)
	}
	return time.Duration(float64(n) / s.fs * 1e9)
}

// phaseShift returns e^{−j·h·p·2π/3}: order h of phase p (0, 1, 2 for a, b,
// c) in a balanced positive-sequence set.
func phaseShift(h, p int) complex128 {
	k := (h * p) % 3
	switch k {
	case 1:
		return complex(-0.5, -math.Sqrt(3)/2)
	case 2:
		return complex(-0.5, math.Sqrt(3)/2)
	}
	return 1
}
