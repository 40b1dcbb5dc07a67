package stream

import (
	"io"
	"math"
	"math/rand/v2"

	"github.com/gridloupe/gridloupe/metrics"
)

// tone is one component of a synthesized channel: RMS amplitude, order of
// the fundamental and phase in degrees (cosine reference) at t = 0.
type tone struct {
	h     int
	rms   float64
	phDeg float64
}

// synthChan is a channel made of harmonic tones of a common fundamental.
type synthChan struct {
	tones []tone
	noise float64 // white noise RMS, engineering units
	gain  func(t float64) float64
}

// synth is a FrameReader producing channels whose fundamental follows
// freq(t); phase is integrated per sample so ramps are exact. Test-only:
// it uses closures and math.Cos per sample.
type synth struct {
	fs    float64
	freq  func(t float64) float64
	ch    []synthChan
	n     uint64
	limit uint64
	phi   float64 // fundamental phase, radians
	rng   *rand.Rand
}

func newSynth(fs float64, freq func(float64) float64, seconds float64, ch ...synthChan) *synth {
	return &synth{fs: fs, freq: freq, ch: ch, limit: uint64(math.Round(seconds * fs)),
		rng: rand.New(rand.NewPCG(1, 2))}
}

func (s *synth) ReadFrames(dst []float64) (int, error) {
	nch := len(s.ch)
	n := 0
	for ; n < len(dst)/nch && s.n < s.limit; n++ {
		t := float64(s.n) / s.fs
		for c, ch := range s.ch {
			g := 1.0
			if ch.gain != nil {
				g = ch.gain(t)
			}
			v := 0.0
			for _, tn := range ch.tones {
				v += math.Sqrt2 * tn.rms * math.Cos(float64(tn.h)*s.phi+tn.phDeg*math.Pi/180)
			}
			v *= g
			if ch.noise > 0 {
				v += ch.noise * s.rng.NormFloat64()
			}
			dst[n*nch+c] = v
		}
		// advance the phase by the mid-point frequency (trapezoidal rule)
		f0 := s.freq(t)
		f1 := s.freq(t + 1/s.fs)
		s.phi += math.Pi * (f0 + f1) / s.fs
		s.n++
	}
	if n == 0 {
		return 0, io.EOF
	}
	return n, nil
}

func constFreq(f float64) func(float64) float64 { return func(float64) float64 { return f } }

// setupOf builds a metrics setup from channel descriptions.
func setupOf(tb interface{ Fatal(...any) }, wiring metrics.Wiring, nomV, il float64, all bool, orders []int, chans ...metrics.Channel) *metrics.Setup {
	if all {
		orders = make([]int, 50)
		for i := range orders {
			orders[i] = i + 1
		}
	}
	s, err := metrics.NewSetup(metrics.Setup{Channels: chans, Orders: orders, AllOrders: all, Wiring: wiring,
		NominalV: nomV, ILA: il, Reference: 0})
	if err != nil {
		tb.Fatal(err)
	}
	return s
}

// cloneRecord deep-copies a record (the pipeline reuses its own).
func cloneRecord(r *metrics.Record) metrics.Record { return *r.Clone() }

// sixChannels returns an interleaved six-channel recording (va, vb, vc,
// ia, ib, ic: a balanced set with 5th and 7th harmonics and noise) and the
// matching channel descriptions, for benchmarks and allocation tests.
func sixChannels(fs, seconds, f float64) ([]float64, []metrics.Channel) {
	chans := []synthChan{
		{tones: []tone{{1, 230, 0}, {5, 7, 40}, {7, 5, -70}}, noise: 0.2},
		{tones: []tone{{1, 230, -120}, {5, 7, 160}, {7, 5, -190}}, noise: 0.2},
		{tones: []tone{{1, 230, 120}, {5, 7, -80}, {7, 5, 50}}, noise: 0.2},
		{tones: []tone{{1, 128, -13}, {5, 42, 150}, {7, 20, 20}}, noise: 0.1},
		{tones: []tone{{1, 128, -133}, {5, 42, 270}, {7, 20, -100}}, noise: 0.1},
		{tones: []tone{{1, 128, 107}, {5, 42, 30}, {7, 20, 140}}, noise: 0.1},
	}
	src := newSynth(fs, constFreq(f), seconds, chans...)
	data := make([]float64, 0, int(fs*seconds)*6)
	buf := make([]float64, 6*1024)
	for {
		n, err := src.ReadFrames(buf)
		data = append(data, buf[:n*6]...)
		if err != nil {
			break
		}
	}
	return data, []metrics.Channel{
		{Name: "va", Kind: metrics.Voltage, Phase: 'a'}, {Name: "vb", Kind: metrics.Voltage, Phase: 'b'},
		{Name: "vc", Kind: metrics.Voltage, Phase: 'c'}, {Name: "ia", Kind: metrics.Current, Phase: 'a'},
		{Name: "ib", Kind: metrics.Current, Phase: 'b'}, {Name: "ic", Kind: metrics.Current, Phase: 'c'},
	}
}
