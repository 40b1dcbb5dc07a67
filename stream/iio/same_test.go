package iio

import (
	"bytes"
	"context"
	"io"
	"math"
	"os"
	"testing"
	"time"

	"github.com/gridloupe/gridloupe/metrics"
	"github.com/gridloupe/gridloupe/stream"
	"github.com/gridloupe/gridloupe/stream/encode"
	"github.com/gridloupe/gridloupe/stream/iio/iiotest"
)

// sixCounts generates seconds of a balanced wye supply at 50.02 Hz with
// drive currents, as whole ADC counts (frames of six int16).
func sixCounts(seconds float64) [][]int16 {
	const fs, f = 10240.0, 50.02
	var out [][]int16
	for k := range int(seconds * fs) {
		w := 2 * math.Pi * f * float64(k) / fs
		fr := make([]int16, 6)
		for p := range 3 {
			sh := -2 * math.Pi / 3 * float64(p)
			fr[p] = int16(math.Round(16000 * (math.Cos(w+sh) + 0.02*math.Cos(5*(w+sh)+0.3))))
			fr[3+p] = int16(math.Round(12000 * (math.Cos(w+sh-0.4) + 0.18*math.Cos(5*(w+sh-0.4)+2))))
		}
		out = append(out, fr)
	}
	return out
}

// memFrames is a FrameReader over interleaved values.
type memFrames struct {
	v   []float64
	nch int
}

func (m *memFrames) ReadFrames(dst []float64) (int, error) {
	if len(m.v) == 0 {
		return 0, io.EOF
	}
	n := copy(dst[:len(dst)/m.nch*m.nch], m.v)
	m.v = m.v[n:]
	return n / m.nch, nil
}

// records runs src through the pipeline and returns the JSON Lines.
func records(t *testing.T, s *metrics.Setup, src stream.FrameReader) []byte {
	t.Helper()
	var out bytes.Buffer
	enc := encode.NewJSONL(&out, s)
	p, err := stream.New(stream.Config{Setup: s, SampleRate: 10240, NominalHz: 50,
		Cal: []stream.Cal{{Scale: 0.02}, {Scale: 0.02}, {Scale: 0.02}, {Scale: 0.01}, {Scale: 0.01}, {Scale: 0.01}}})
	if err != nil {
		t.Fatal(err)
	}
	err = p.Run(context.Background(), src, enc.Write)
	if err != nil && !isVanished(err) {
		t.Fatal(err)
	}
	if err := enc.Flush(); err != nil {
		t.Fatal(err)
	}
	return out.Bytes()
}

func isVanished(err error) bool {
	return err != nil && bytes.Contains([]byte(err.Error()), []byte("device vanished"))
}

// TestSameFiguresIIO: the same counts read from a fake IIO device (scale
// 1000 mV per count, so volts at the input equal the counts exactly) and
// handed to the pipeline from memory give identical records (DESIGN
// "Sources": the figures do not depend on the input).
func TestSameFiguresIIO(t *testing.T) {
	frames := sixCounts(3.2)
	var flat []float64
	var ts []int64
	t0 := time.Date(2026, 3, 1, 10, 0, 0, 0, time.UTC).UnixNano()
	for k, f := range frames {
		for _, v := range f {
			flat = append(flat, float64(v))
		}
		ts = append(ts, t0+int64(math.Round(float64(k)*1e9/10240)))
	}
	var els []iiotest.Element
	var names []string
	for i := range 6 {
		els = append(els, iiotest.Element{Name: "in_voltage" + string(rune('0'+i)), Type: "le:s16/16>>0"})
		names = append(names, "voltage"+string(rune('0'+i)))
	}
	els = append(els, iiotest.Element{Name: "in_timestamp", Type: "le:s64/64>>0"})
	tr, err := iiotest.New(t.TempDir(), "dc2-adc", 10240, els, map[string]string{"in_voltage_scale": "1000"})
	if err != nil {
		t.Fatal(err)
	}
	if err := os.WriteFile(tr.Node, iiotest.S16Scans(frames, ts), 0o644); err != nil {
		t.Fatal(err)
	}
	src, err := Open(Config{Device: "dc2-adc", Channels: names, Sysfs: tr.Sysfs, Dev: tr.Dev})
	if err != nil {
		t.Fatal(err)
	}
	defer src.Close()
	chans := []metrics.Channel{{Name: "va", Kind: metrics.Voltage, Phase: 'a'}, {Name: "vb", Kind: metrics.Voltage, Phase: 'b'},
		{Name: "vc", Kind: metrics.Voltage, Phase: 'c'}, {Name: "ia", Kind: metrics.Current, Phase: 'a'},
		{Name: "ib", Kind: metrics.Current, Phase: 'b'}, {Name: "ic", Kind: metrics.Current, Phase: 'c'}}
	orders := make([]int, 50)
	for i := range orders {
		orders[i] = i + 1
	}
	s, err := metrics.NewSetup(metrics.Setup{Channels: chans, Orders: orders, AllOrders: true, Wiring: metrics.Wye, NominalV: 230, ILA: 160})
	if err != nil {
		t.Fatal(err)
	}
	want := records(t, s, &memFrames{v: flat, nch: 6})
	got := records(t, s, src)
	if len(want) == 0 || !bytes.Equal(got, want) {
		t.Errorf("records from the IIO device differ from the same samples in memory:\n got %.300s\nwant %.300s", got, want)
	}
}
