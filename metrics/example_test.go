package metrics_test

import (
	"fmt"
	"math"
	"math/cmplx"

	"github.com/gridloupe/gridloupe/metrics"
)

// One 200 ms window of a single-phase feeder at the North Weir pumping
// station (cabinet DC-2): 230 V, 100 A lagging by 36.87° (a 0.8 power
// factor), sums written here in closed form for a pure sine. In the
// program, package stream accumulates them from samples.
func ExampleCompute() {
	s, err := metrics.NewSetup(metrics.Setup{
		Channels: []metrics.Channel{
			{Name: "va", Kind: metrics.Voltage, Phase: 'a', FullScale: 400},
			{Name: "ia", Kind: metrics.Current, Phase: 'a', FullScale: 200},
		},
		Orders: []int{1, 5}, Wiring: metrics.SinglePhase, NominalV: 230, ILA: 160,
	})
	if err != nil {
		fmt.Println(err)
		return
	}
	const n = 2048
	phi := math.Atan2(3, 4)
	in := &metrics.Input{
		Ch: []metrics.ChannelSums{
			{N: n, SumSq: n * 230 * 230, Phasors: []complex128{230, 0}},
			{N: n, SumSq: n * 100 * 100, Phasors: []complex128{cmplx.Rect(100, -phi), 0}},
		},
		SumVI:  []float64{n * 230 * 100 * math.Cos(phi)},
		FreqHz: 50, OmegaHz: 50, Lock: true,
	}
	r := metrics.NewRecord(s)
	metrics.Compute(s, in, r)
	p := r.Phases[0]
	fmt.Printf("P %.0f W, Q1 %.0f var, S %.0f VA\n", p.P, p.Q1, p.S)
	fmt.Printf("pf %.2f, dpf %.2f, ia at %.2f°\n", p.PF, p.DPF, r.Channels[1].H[0].PhaseDeg)
	fmt.Printf("ia thd %.1f %%, 5th %.1f %%, flags %v\n", r.Channels[1].THDPct, r.Channels[1].H[1].Pct, r.Flags.Names())
	// Output:
	// P 18400 W, Q1 13800 var, S 23000 VA
	// pf 0.80, dpf 0.80, ia at -36.87°
	// ia thd 0.0 %, 5th 0.0 %, flags []
}

// Fifteen 200 ms windows make one 3 s value (IEC 61000-4-30): here two
// windows of different voltage show the RMS rule.
func ExampleAggregator() {
	s, _ := metrics.NewSetup(metrics.Setup{
		Channels: []metrics.Channel{{Name: "va", Kind: metrics.Voltage, Phase: 'a'}},
		Orders:   []int{1}, Wiring: metrics.SinglePhase, NominalV: 230,
	})
	a := metrics.NewAggregator(s)
	r := metrics.NewRecord(s)
	for _, v := range []float64{220, 240} {
		in := &metrics.Input{Ch: []metrics.ChannelSums{{N: 2048, SumSq: 2048 * v * v, Phasors: []complex128{complex(v, 0)}}},
			FreqHz: 50, OmegaHz: 50, Lock: true}
		metrics.Compute(s, in, r)
		r.Samples, r.DurationS = 2048, 0.2
		a.Add(r)
	}
	out := metrics.NewRecord(s)
	a.Result(out)
	fmt.Printf("%d windows, %.1f s, rms %.3f V\n", a.Count(), out.DurationS, out.Channels[0].RMS)
	// Output:
	// 2 windows, 0.4 s, rms 230.217 V
}

func ExampleNewSetup() {
	_, err := metrics.NewSetup(metrics.Setup{
		Channels: []metrics.Channel{{Name: "ia", Kind: metrics.Current, Phase: 'a'}},
		Orders:   []int{1}, Wiring: metrics.SinglePhase,
	})
	fmt.Println(err)
	// Output:
	// reference 0: metrics: invalid reference channel
}
