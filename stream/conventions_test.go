package stream

import (
	"bytes"
	"encoding/binary"
	"math"
	"testing"
	"time"

	"github.com/gridloupe/gridloupe/metrics"
	"github.com/gridloupe/gridloupe/stream/input"
)

// TestDelayLateSample: a current channel sampled 40 µs after the frame
// instant (its samples read i(t + 40 µs), so order h shows h·ω·40 µs too
// much phase) is corrected by delay_us: +40 (README "delay_us": positive for
// a late sample); −40 doubles the error. Closed forms: PF = DPF = cos 30°
// for a sinusoidal pair; uncorrected the angle is 30° − 0.72° at 50 Hz.
func TestDelayLateSample(t *testing.T) {
	const fs, f, tau = 10240.0, 50.0, 40e-6
	late := 360 * f * tau // degrees of the fundamental
	v := synthChan{tones: []tone{{1, 230, 0}}}
	i := synthChan{tones: []tone{{1, 100, -30 + late}}}
	want := math.Cos(30 * math.Pi / 180)
	// pfDelayTol: the sinusoidal closed form holds to rounding on exact
	// windows; 1e-6 sits far below the 0.0063 an uncorrected 0.72° gives
	const pfDelayTol = 1e-6
	for _, tc := range []struct {
		name  string
		delay float64
		want  float64
	}{
		{"corrected", tau, want},
		{"opposite sign", -tau, math.Cos((30 - 2*late) * math.Pi / 180)},
		{"uncorrected", 0, math.Cos((30 - late) * math.Pi / 180)},
	} {
		t.Run(tc.name, func(t *testing.T) {
			s := setupOf(t, metrics.SinglePhase, 230, 0, false, []int{1, 5},
				metrics.Channel{Name: "v", Kind: metrics.Voltage, Phase: 'a'},
				metrics.Channel{Name: "i", Kind: metrics.Current, Phase: 'a', DelayS: tc.delay})
			recs, _ := runPipeline(t, Config{Setup: s, SampleRate: fs, NominalHz: 50}, newSynth(fs, constFreq(f), 1.2, v, i))
			for _, r := range recs[acquireWindows:] {
				if d := math.Abs(r.Phases[0].PF - tc.want); !(d <= pfDelayTol) {
					t.Errorf("pf %.7f, want %.7f (closed form cos of the angle)", r.Phases[0].PF, tc.want)
					break
				}
			}
		})
	}
}

// wav16 returns a one-channel 16-bit PCM WAV file of the given samples
// (RIFF/WAVE layout: the canonical 44-byte header, common practice).
func wav16(fs int, x []int16) []byte {
	var b bytes.Buffer
	le := binary.LittleEndian
	w := func(v any) { _ = binary.Write(&b, le, v) }
	b.WriteString("RIFF")
	w(uint32(36 + 2*len(x)))
	b.WriteString("WAVEfmt ")
	w(uint32(16))
	w(uint16(1)) // PCM
	w(uint16(1)) // channels
	w(uint32(fs))
	w(uint32(2 * fs))
	w(uint16(2))
	w(uint16(16))
	b.WriteString("data")
	w(uint32(2 * len(x)))
	w(x)
	return b.Bytes()
}

// TestClippedAtIntegerRail: a 16-bit recording clamped at +32767 is flagged
// clipped although full_scale is 32768·scale (the positive rail is one step
// below the nominal range, two's complement); the same recording scaled so
// that no sample reaches the rail is not.
func TestClippedAtIntegerRail(t *testing.T) {
	const fs, scale = 10240, 0.01
	for _, tc := range []struct {
		name string
		peak float64 // of the generated sine on a 20000-count offset, counts
		want bool
	}{
		{"clamped at +32767", 14000, true},
		{"below the rail", 12000, false},
	} {
		t.Run(tc.name, func(t *testing.T) {
			x := make([]int16, fs)
			for n := range x {
				v := 20000 + tc.peak*math.Cos(2*math.Pi*50*float64(n)/fs) // only the positive rail is reached
				x[n] = int16(max(-32768, min(32767, math.Round(v))))
			}
			src, err := input.NewWAV("clip.wav", bytes.NewReader(wav16(fs, x)), 1)
			if err != nil {
				t.Fatal(err)
			}
			s := setupOf(t, metrics.SinglePhase, 230, 0, false, []int{1},
				metrics.Channel{Name: "v", Kind: metrics.Voltage, Phase: 'a', FullScale: 32768 * scale})
			recs, _ := runPipeline(t, Config{Setup: s, SampleRate: fs, NominalHz: 50, Cal: []Cal{{Scale: scale}}}, src)
			for _, r := range recs {
				if got := r.Flags&metrics.FlagClipped != 0; got != tc.want {
					t.Errorf("window at %v: clipped %v, want %v", r.Start, got, tc.want)
				}
			}
		})
	}
}

// TestClippedSingleSample: one sample at the rail (full_scale, either sign)
// flags the window holding it and no other, wherever it falls: at the
// start, at even and odd positions, at the last sample of a window and of a
// block, with blocks of 512 and of 333 frames (segments of odd length; the
// last samples of the first two blocks of 333 are 332 and 665).
func TestClippedSingleSample(t *testing.T) {
	const fs, fullScale = 10240.0, 400.0
	for _, bf := range []int{512, 333} {
		for _, n0 := range []int{0, 1, 2, 332, 511, 512, 665, 1000, 1001, 2047, 2048, 5001, 5002, 7777} {
			x := make([]float64, int(fs))
			for n := range x {
				x[n] = 0.5 * fullScale * math.Cos(2*math.Pi*50*float64(n)/fs)
			}
			x[n0] = fullScale
			if n0%2 == 1 {
				x[n0] = -fullScale
			}
			s := setupOf(t, metrics.SinglePhase, 230, 0, false, []int{1},
				metrics.Channel{Name: "v", Kind: metrics.Voltage, Phase: 'a', FullScale: fullScale})
			recs, _ := runPipeline(t, Config{Setup: s, SampleRate: fs, NominalHz: 50, BlockFrames: bf}, &memSource{data: x, nch: 1})
			flagged := 0
			for _, r := range recs {
				start := int(math.Round(r.Start.Sub(time.Unix(0, 0)).Seconds() * fs))
				in := n0 >= start && n0 < start+int(r.Samples)
				if got := r.Flags&metrics.FlagClipped != 0; got != in {
					t.Errorf("blocks of %d, rail at sample %d: window [%d, %d) clipped %v, want %v", bf, n0, start, start+int(r.Samples), got, in)
				}
				if in {
					flagged++
				}
			}
			if flagged != 1 {
				t.Errorf("blocks of %d, rail at sample %d: %d windows hold it, want 1", bf, n0, flagged)
			}
		}
	}
}
