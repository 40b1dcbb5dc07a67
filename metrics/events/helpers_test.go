package events

import (
	"math"
	"testing"
)

// step is one rectangular change of a channel's RMS amplitude: from t0 to
// t1 (seconds) the channel's RMS is v instead of the declared value.
type step struct {
	ch     int
	t0, t1 float64
	v      float64
}

// signal builds a three-phase (or fewer) set of sines at f Hz with RMS
// udin, 120° apart, changed by steps, plus one current channel (always
// 10 A) so captures hold a non-voltage channel too.
func signal(fs, f, udin, secs float64, nv int, steps []step) [][]float64 {
	n := int(math.Round(secs * fs))
	out := make([][]float64, nv+1)
	for c := range out {
		out[c] = make([]float64, n)
	}
	for i := range n {
		t := float64(i) / fs
		for c := range nv {
			a := udin
			for _, s := range steps {
				if s.ch == c && t >= s.t0 && t < s.t1 {
					a = s.v
				}
			}
			out[c][i] = math.Sqrt2 * a * math.Cos(2*math.Pi*f*t+0.3-float64(c)*2*math.Pi/3)
		}
		out[nv][i] = math.Sqrt2 * 10 * math.Cos(2*math.Pi*f*t-0.5)
	}
	return out
}

func newDet(tb testing.TB, fs, f float64, nv int, block int, mod func(*Config)) *Detector {
	tb.Helper()
	cfg := DefaultConfig()
	cfg.SampleRate, cfg.NominalHz, cfg.DeclaredV = fs, 50, 230
	if f > 55 {
		cfg.NominalHz = 60
	}
	for i := range nv {
		cfg.Voltages = append(cfg.Voltages, i)
	}
	cfg.Channels, cfg.MaxBlock = nv+1, block
	if mod != nil {
		mod(&cfg)
	}
	d, err := New(cfg)
	if err != nil {
		tb.Fatal(err)
	}
	d.SetFrequency(f, true)
	return d
}

// feed runs sig through d in blocks and returns the notes. lock, when not
// nil, says whether the tracker is locked at a given time (else nominal).
func feed(d *Detector, sig [][]float64, block int, f float64, lock func(t float64) bool, close bool) []Note {
	var notes []Note
	n := len(sig[0])
	for off := 0; off < n; off += block {
		k := min(block, n-off)
		if lock != nil {
			d.SetFrequency(f, lock(float64(off)/d.cfg.SampleRate))
		}
		d.Write(sig, off, k)
		for nt, ok := d.Next(); ok; nt, ok = d.Next() {
			notes = append(notes, nt)
		}
	}
	if close {
		d.Close()
		for nt, ok := d.Next(); ok; nt, ok = d.Next() {
			notes = append(notes, nt)
		}
	}
	return notes
}

func ended(notes []Note) []Event {
	var out []Event
	for _, n := range notes {
		if n.Kind == Ended {
			out = append(out, n.Event)
		}
	}
	return out
}
