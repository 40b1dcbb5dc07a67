package store

import (
	"encoding/binary"
	"fmt"
	"math"
	"time"
)

// waveVersion leads every stored waveform.
const waveVersion = 1

// Waveform is one event's capture with what drawing it needs.
//
// Stored form (big-endian), version 1: version byte; start (int64 ns);
// sample rate (float64 Hz); frames (uint32); channel count (uint8); the
// declared voltage, nominal frequency and the dip, swell, interruption and
// hysteresis percentages (float32 each); per channel its name (uvarint
// length, bytes), kind (1 voltage, 2 current) and scale (float32); then per
// channel its frames as int16 counts of that scale (−32768 = a missing
// sample). So a capture costs 2 bytes per sample plus about 40 bytes and
// 10 per channel: 4 s of six channels at 10.24 kHz is 491,520 + 100 bytes.
// The int16 step is 1/32767 of the channel's peak (0.003 %).
type Waveform struct {
	Start      time.Time // wall time of the first frame
	SampleRate float64   // Hz
	Channels   []WaveChannel
	Samples    [][]float32 // per channel; NaN = missing
	DeclaredV  float64
	NominalHz  float64
	DipPct     float64
	SwellPct   float64
	IntPct     float64
	HystPct    float64
}

// WaveChannel names one captured channel.
type WaveChannel struct {
	Name    string
	Voltage bool
}

// maxWaveFrames bounds a decoded capture (60 s at 1 MHz would be far
// beyond any config: max_capture_s ≤ 60 and rates ≤ 1 MHz give 6e7).
const maxWaveFrames = 60_000_000

// EncodeWaveform encodes frames of at(i, c) for the channels of meta (its
// Samples are ignored).
func EncodeWaveform(meta *Waveform, frames int, at func(i, c int) float32) []byte {
	nch := len(meta.Channels)
	scales := make([]float32, nch)
	for c := range nch {
		peak := float32(0)
		for i := range frames {
			if v := at(i, c); v == v && !math.IsInf(float64(v), 0) {
				peak = max(peak, float32(math.Abs(float64(v))))
			}
		}
		scales[c] = peak / 32767
		if scales[c] == 0 {
			scales[c] = 1
		}
	}
	b := make([]byte, 0, 64+nch*16+2*frames*nch)
	b = append(b, waveVersion)
	b = be.AppendUint64(b, uint64(meta.Start.UnixNano()))
	b = be.AppendUint64(b, math.Float64bits(meta.SampleRate))
	b = be.AppendUint32(b, uint32(frames))
	b = append(b, byte(nch))
	for _, v := range []float64{meta.DeclaredV, meta.NominalHz, meta.DipPct, meta.SwellPct, meta.IntPct, meta.HystPct} {
		b = appendF32(b, v)
	}
	for c, ch := range meta.Channels {
		b = binary.AppendUvarint(b, uint64(len(ch.Name)))
		b = append(b, ch.Name...)
		kind := byte(2)
		if ch.Voltage {
			kind = 1
		}
		b = append(b, kind)
		b = be.AppendUint32(b, math.Float32bits(scales[c]))
	}
	for c := range nch {
		inv := 1 / float64(scales[c])
		for i := range frames {
			v := float64(at(i, c))
			q := int16(-32768)
			if v == v && !math.IsInf(v, 0) {
				q = int16(max(-32767, min(32767, math.Round(v*inv))))
			}
			b = be.AppendUint16(b, uint16(q))
		}
	}
	return b
}

// DecodeWaveform decodes a stored waveform; damaged bytes give an error
// wrapping ErrCorrupt, never a panic.
func DecodeWaveform(b []byte) (*Waveform, error) {
	r := reader{b: b}
	if v := r.u8(); r.err == nil && v != waveVersion {
		return nil, fmt.Errorf("waveform version %d (want %d): %w", v, waveVersion, ErrCorrupt)
	}
	w := &Waveform{Start: unixNano(int64(r.u64()))}
	w.SampleRate = math.Float64frombits(r.u64())
	var frames int
	if p := r.take(4); p != nil {
		frames = int(be.Uint32(p))
	}
	nch := int(r.u8())
	f := make([]float64, 6)
	for i := range f {
		f[i] = r.f32()
	}
	if r.err != nil {
		return nil, fmt.Errorf("waveform header: %w", ErrCorrupt)
	}
	w.DeclaredV, w.NominalHz, w.DipPct, w.SwellPct, w.IntPct, w.HystPct = f[0], f[1], f[2], f[3], f[4], f[5]
	if frames > maxWaveFrames || nch == 0 || !(w.SampleRate > 0) || len(b) < 2*frames*nch {
		return nil, fmt.Errorf("waveform of %d frames, %d channels at %v Hz in %d bytes: %w", frames, nch, w.SampleRate, len(b), ErrCorrupt)
	}
	scales := make([]float64, nch)
	for c := range nch {
		n := r.uvarint()
		if r.err != nil || n > 256 {
			return nil, fmt.Errorf("waveform channel %d name: %w", c, ErrCorrupt)
		}
		name := string(r.take(int(n)))
		kind := r.u8()
		scales[c] = r.f32()
		if r.err != nil || (kind != 1 && kind != 2) {
			return nil, fmt.Errorf("waveform channel %d: %w", c, ErrCorrupt)
		}
		w.Channels = append(w.Channels, WaveChannel{Name: name, Voltage: kind == 1})
	}
	data := r.take(2 * frames * nch)
	if r.err != nil {
		return nil, fmt.Errorf("waveform samples: %w", ErrCorrupt)
	}
	w.Samples = make([][]float32, nch)
	for c := range nch {
		s := make([]float32, frames)
		off := 2 * c * frames
		for i := range s {
			q := int16(binary.BigEndian.Uint16(data[off+2*i:]))
			if q == -32768 {
				s[i] = float32(math.NaN())
				continue
			}
			s[i] = float32(float64(q) * scales[c])
		}
		w.Samples[c] = s
	}
	return w, nil
}
