package metrics

import (
	"encoding/binary"
	"math"
	"testing"
)

// FuzzCompute feeds Compute arbitrary sums and phasors (the pipeline's
// output is its input, so this is its parser-like boundary): it must not
// panic, must never produce ±Inf, and power factors stay within [−1, 1].
func FuzzCompute(f *testing.F) {
	f.Add([]byte{}, uint8(0))
	f.Add(make([]byte, 8*64), uint8(3))
	seed := make([]byte, 0, 8*64)
	for i := range 64 {
		seed = binary.LittleEndian.AppendUint64(seed, math.Float64bits(float64(i*37%101)-50))
	}
	f.Add(seed, uint8(1))
	f.Fuzz(func(t *testing.T, data []byte, mode uint8) {
		s := wyeSetup(t, mode&4 != 0, []int{1, 3, 5})
		next := func() float64 {
			if len(data) < 8 {
				return 1
			}
			x := math.Float64frombits(binary.LittleEndian.Uint64(data))
			data = data[8:]
			return x
		}
		in := &Input{Ch: make([]ChannelSums, len(s.Channels)), SumVI: make([]float64, len(s.Pairs)),
			FreqHz: next(), OmegaHz: next(), Lock: mode&1 != 0}
		for c := range in.Ch {
			in.Ch[c] = ChannelSums{N: int(mode>>3) + 1, Sum: next(), SumSq: math.Abs(next()), Phasors: make([]complex128, 3),
				Bad: mode&2 != 0 && c == 0}
			for k := range in.Ch[c].Phasors {
				in.Ch[c].Phasors[k] = complex(next(), next())
			}
		}
		for k := range in.SumVI {
			in.SumVI[k] = next()
		}
		r := NewRecord(s)
		Compute(s, in, r)
		checkNoInf(t, r)
		for _, p := range r.Phases {
			if !IsNull(p.PF) && math.Abs(p.PF) > 1 || !IsNull(p.DPF) && math.Abs(p.DPF) > 1 {
				t.Errorf("phase %c pf %v dpf %v", p.Phase, p.PF, p.DPF)
			}
		}
		a := NewAggregator(s)
		a.Add(r)
		a.Add(r)
		out := NewRecord(s)
		a.Result(out)
		checkNoInf(t, out)
	})
}
