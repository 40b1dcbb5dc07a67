package sim_test

import (
	"fmt"

	"github.com/gridloupe/gridloupe/stream/sim"
)

// North Weir DC-2 at full load, reactors healthy, then with the reactors
// losing their effect: the model's expected current distortion.
func Example() {
	cfg := sim.DefaultConfig() // North Weir pumping station, cabinet DC-2
	cfg.Limit = 2048           // 10 cycles at 50 Hz and 10.24 kHz
	src, err := sim.New(cfg)
	if err != nil {
		fmt.Println(err)
		return
	}
	src.SetLoad(1)
	frames := make([]float64, 512*len(sim.DefaultChannels()))
	total := 0
	for {
		n, err := src.ReadFrames(frames)
		total += n
		if err != nil { // io.EOF after Limit frames
			break
		}
		if total == 1024 {
			src.SetFilterCondition(0) // reactor no longer effective
		}
	}
	tr := src.Truth()
	fmt.Printf("frames %d, I1 %.0f A, I5/I1 %.0f %%, THD_I %.0f %%, TDD %.0f %%\n",
		total, tr.I1, tr.IhPct[5], tr.THDIPct, tr.TDDPct)
	// Output:
	// frames 2048, I1 160 A, I5/I1 67 %, THD_I 93 %, TDD 93 %
}

// A 60 Hz site with the default seven channels: raw values come out
// interleaved in channel order.
func ExampleSource_ReadFrames() {
	src, err := sim.New(sim.Config{
		SampleRate: 12800, FrequencyHz: 60, VoltageV: 277, // Larkfield office tower, cabinet AH-4
		NoNoise: true, NoWander: true,
	})
	if err != nil {
		fmt.Println(err)
		return
	}
	buf := make([]float64, 2*7)
	n, _ := src.ReadFrames(buf)
	fmt.Printf("%d frames; first frame va %.0f V, vb %.0f V, vc %.0f V\n", n, buf[0], buf[1], buf[2])
	// Output:
	// 2 frames; first frame va 395 V, vb -199 V, vc -196 V
}
