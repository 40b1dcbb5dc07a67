package events_test

import (
	"fmt"
	"math"

	"github.com/gridloupe/gridloupe/metrics/events"
)

// A 230 V, 50 Hz phase dips to 60 % for 100 ms.
func Example() {
	const fs = 10000.0
	cfg := events.DefaultConfig()
	cfg.SampleRate, cfg.NominalHz, cfg.DeclaredV = fs, 50, 230
	cfg.Voltages, cfg.Channels, cfg.MaxBlock = []int{0}, 1, 500
	d, err := events.New(cfg)
	if err != nil {
		fmt.Println(err)
		return
	}
	d.SetFrequency(50, true)
	buf := [][]float64{make([]float64, 500)}
	for blk := range 20 {
		for i := range buf[0] {
			n := blk*500 + i
			a := 230.0
			if n >= 3000 && n < 4000 {
				a = 138
			}
			buf[0][i] = math.Sqrt2 * a * math.Sin(2*math.Pi*50*float64(n)/fs)
		}
		d.Write(buf, 0, 500)
		for n, ok := d.Next(); ok; n, ok = d.Next() {
			if n.Kind == events.Ended {
				e := n.Event
				fmt.Printf("%s at %.3f s for %.3f s, residual %.1f V\n", e.Kind, float64(e.Start)/fs, float64(e.Duration())/fs, e.ExtremeV)
			}
		}
	}
	// Output:
	// dip at 0.300 s for 0.100 s, residual 138.0 V
}
