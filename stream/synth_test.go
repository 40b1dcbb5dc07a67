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
func cloneRecord(r *metrics.Record) metrics.Record {
	c := *r
	c.Channels = append([]metrics.ChannelValues(nil), r.Channels...)
	for i := range c.Channels {
		c.Channels[i].H = append([]metrics.Harmonic(nil), r.Channels[i].H...)
	}
	c.Phases = append([]metrics.PhaseValues(nil), r.Phases...)
	c.SeqV = append([]metrics.Seq(nil), r.SeqV...)
	c.SeqI = append([]metrics.Seq(nil), r.SeqI...)
	return c
}
