package gateway

import (
	"context"
	"io"
	"math"
	"path/filepath"
	"strings"
	"testing"
	"time"

	"github.com/gridloupe/gridloupe/metrics/events"
	"github.com/gridloupe/gridloupe/store"
	"github.com/gridloupe/gridloupe/stream"
)

// dipSource is va, ia at 50 Hz, 6.4 kHz, with va at 60 % from 1.0 to 1.1 s.
type dipSource struct{ n, limit int }

func (s *dipSource) ReadFrames(dst []float64) (int, error) {
	k := 0
	for ; k < len(dst)/2 && s.n < s.limit; k++ {
		t := float64(s.n) / 6400
		a := 230.0
		if t >= 1.0 && t < 1.1 {
			a = 138
		}
		dst[2*k] = math.Sqrt2 * a * math.Cos(2*math.Pi*50*t)
		dst[2*k+1] = math.Sqrt2 * 100 * math.Cos(2*math.Pi*50*t-0.3)
		s.n++
	}
	if k == 0 {
		return 0, io.EOF
	}
	return k, nil
}

// TestGatewayStoresEvents: under the gateway, a dip is stored with its
// waveform and its summary is queued on …/event at QoS 1.
func TestGatewayStoresEvents(t *testing.T) {
	t.Parallel()
	r := newRig(t, filepath.Join(t.TempDir(), "gl.db"), 1)
	ec := events.DefaultConfig()
	var seen []events.Record
	g, err := New(Config{
		Pipeline: stream.Config{Setup: r.setup, SampleRate: 6400, NominalHz: 50, Base: t0, Events: &ec},
		Source:   &dipSource{limit: 3 * 6400}, Store: r.db, Base: "gridloupe/test-site/gw1", Site: "test-site", Gateway: "gw1",
		CommitEvery: 20 * time.Millisecond, OnEvent: func(e events.Record) { seen = append(seen, e) }})
	if err != nil {
		t.Fatal(err)
	}
	if err := g.Run(context.Background()); err != nil {
		t.Fatal(err)
	}
	var got []events.Record
	if err := r.db.Events(time.Time{}, time.Time{}, func(e events.Record) error { got = append(got, e); return nil }); err != nil {
		t.Fatal(err)
	}
	if len(got) != 1 || got[0].Kind != events.Dip || got[0].Seq == 0 || len(seen) != 1 {
		t.Fatalf("stored %+v, seen %d, want one dip with a seq", got, len(seen))
	}
	// closed form: 100 ms at 60 % of 230 V; IEC 61000-4-30 class A, from memory: ±1 cycle, ±0.2 % of Udin
	if math.Abs(got[0].DurationS-0.1) > 0.02 || math.Abs(got[0].ExtremeV-138) > 0.46 {
		t.Fatalf("dip %+v, want 0.1 s at 138 V", got[0])
	}
	_, wave, err := r.db.Event(got[0].ID)
	if err != nil {
		t.Fatal(err)
	}
	w, err := store.DecodeWaveform(wave)
	if err != nil || len(w.Samples) != 2 || len(w.Samples[0]) != got[0].WaveformSamples || w.DipPct != 90 {
		t.Fatalf("waveform %v: %+v", err, w)
	}
	msgs, err := r.db.Pending(0, 100)
	if err != nil {
		t.Fatal(err)
	}
	n := 0
	for _, m := range msgs {
		if m.Topic == "gridloupe/test-site/gw1/event" {
			n++
			if m.QoS != 1 || m.Seq != got[0].Seq || !strings.Contains(string(m.Payload), `"event":"dip"`) || strings.Contains(string(m.Payload), "samples\":[") {
				t.Fatalf("event message %+v %s", m, m.Payload)
			}
		}
	}
	if n != 1 {
		t.Fatalf("%d event messages, want 1", n)
	}
}
