package stream_test

import (
	"context"
	"fmt"
	"io"
	"math"
	"time"

	"github.com/gridloupe/gridloupe/metrics"
	"github.com/gridloupe/gridloupe/stream"
)

// sine is a one-channel source: a 230 V RMS, 50 Hz cosine sampled at fs for
// a number of samples (a stand-in for a CSV or WAV reader).
type sine struct {
	fs   float64
	n, k int
}

func (s *sine) ReadFrames(dst []float64) (int, error) {
	i := 0
	for ; i < len(dst) && s.k < s.n; i, s.k = i+1, s.k+1 {
		dst[i] = 230 * math.Sqrt2 * math.Cos(2*math.Pi*50*float64(s.k)/s.fs)
	}
	if i == 0 {
		return 0, io.EOF
	}
	return i, nil
}

func exampleSetup() *metrics.Setup {
	s, err := metrics.NewSetup(metrics.Setup{
		Channels: []metrics.Channel{{Name: "va", Kind: metrics.Voltage, Phase: 'a'}},
		Orders:   []int{1, 3, 5}, Wiring: metrics.SinglePhase, NominalV: 230})
	if err != nil {
		panic(err)
	}
	return s
}

// A Pipeline cuts the source into 10-cycle windows and emits one record per
// window.
func ExamplePipeline() {
	const fs = 6400.0
	p, err := stream.New(stream.Config{Setup: exampleSetup(), SampleRate: fs, NominalHz: 50})
	if err != nil {
		fmt.Println(err)
		return
	}
	n := 0
	err = p.Run(context.Background(), &sine{fs: fs, n: 6400}, func(r *metrics.Record) error {
		if n++; n == 5 { // the tracker has locked by then
			fmt.Printf("window %d: %d samples, %.2f Hz, %.1f V\n", n, r.Samples, r.FreqHz, r.Channels[0].RMS)
		}
		return nil
	})
	fmt.Println("windows:", p.Windows(), "error:", err)
	// Output:
	// window 5: 1280 samples, 50.00 Hz, 230.0 V
	// windows: 5 error: <nil>
}

// Intervals turns window records into 3 s and 10 min values on the clock;
// Flush closes what is open at the end, flagged partial.
func ExampleIntervals() {
	const fs = 6400.0
	s := exampleSetup()
	base := time.Date(2026, 3, 1, 10, 9, 57, 0, time.UTC) // 3 s before a 10-minute tick
	p, err := stream.New(stream.Config{Setup: s, SampleRate: fs, NominalHz: 50, Base: base})
	if err != nil {
		fmt.Println(err)
		return
	}
	iv := stream.NewIntervals(s, metrics.Int3s, metrics.Int10min)
	show := func(r *metrics.Record) error {
		fmt.Printf("%-5s %s %5.2f s %v\n", r.Interval, r.Start.Format("15:04:05.0"), r.DurationS, r.Flags.Names())
		return nil
	}
	if err := p.Run(context.Background(), &sine{fs: fs, n: 4 * 6400}, func(r *metrics.Record) error {
		return iv.Add(r, show)
	}); err != nil {
		fmt.Println(err)
	}
	if err := iv.Flush(show); err != nil {
		fmt.Println(err)
	}
	// Output:
	// 3s    10:09:57.0  3.00 s []
	// 10min 10:09:57.0  3.00 s [partial]
	// 3s    10:10:00.0  1.00 s [partial]
	// 10min 10:10:00.0  1.00 s [partial]
}
