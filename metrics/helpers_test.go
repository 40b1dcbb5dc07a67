package metrics

import (
	"math"
	"reflect"
	"strconv"
	"strings"
	"testing"
)

// Synthesis parameters: 10 cycles of 50 Hz at 1200 samples per cycle
// (fs = 60 kHz), so 60° and 120° fall on whole samples and the half-sample
// time offset keeps every sample off the edges of the block waveforms.
const (
	cycles = 10
	spc    = 1200
	nWin   = cycles * spc
	f0     = 50.0
)

// wave is a signal as a function of the fundamental angle θ = ωt.
type wave func(theta float64) float64

// sample returns n samples of f over `cycles` fundamental cycles, taken at
// θ_i = 2π·cycles·(i + ½)/n.
func sample(n int, f wave) []float64 {
	x := make([]float64, n)
	for i := range x {
		x[i] = f(2 * math.Pi * cycles * (float64(i) + 0.5) / float64(n))
	}
	return x
}

// cosine returns a·√2·cos(hθ + φ): an order-h component of RMS a, phase φ
// (radians) in the cosine-referenced RMS phasor convention.
func cosine(a float64, h int, phi float64) wave {
	return func(th float64) float64 { return a * math.Sqrt2 * math.Cos(float64(h)*th+phi) }
}

func sum(ws ...wave) wave {
	return func(th float64) float64 {
		var s float64
		for _, w := range ws {
			s += w(th)
		}
		return s
	}
}

func shift(w wave, d float64) wave { return func(th float64) float64 { return w(th - d) } }

// square is ±a: +a while cos θ ≥ 0 (the current of an ideal single-phase
// bridge in phase with a cosine voltage).
func square(a float64) wave {
	return func(th float64) float64 {
		if math.Cos(th) >= 0 {
			return a
		}
		return -a
	}
}

// block120 is an ideal six-pulse line current: +a for |θ| < 60°, −a for
// |θ − 180°| < 60°, 0 otherwise (θ wrapped).
func block120(a float64) wave {
	return func(th float64) float64 {
		d := math.Remainder(th, 2*math.Pi) * 180 / math.Pi
		switch {
		case math.Abs(d) < 60:
			return a
		case math.Abs(d) > 120:
			return -a
		}
		return 0
	}
}

// dftSums returns the window sums of x with RMS phasors of orders computed
// by a direct DFT with an exact twiddle table: X_h = (√2/N)·Σ x[n]·e^{−j2πkn/N},
// k = h·cycles (the slow, obvious reference the goertzel bank must match).
func dftSums(x []float64, orders []int) ChannelSums {
	n := len(x)
	tw := make([]complex128, n)
	for m := range tw {
		s, c := math.Sincos(2 * math.Pi * float64(m) / float64(n))
		tw[m] = complex(c, -s)
	}
	cs := ChannelSums{N: n, Phasors: make([]complex128, len(orders))}
	for _, v := range x {
		cs.Sum += v
		cs.SumSq += v * v
		cs.Peak = max(cs.Peak, math.Abs(v))
	}
	for j, h := range orders {
		k := h * cycles
		var acc complex128
		for i, v := range x {
			acc += complex(v, 0) * tw[(k*i)%n]
		}
		cs.Phasors[j] = acc * complex(math.Sqrt2/float64(n), 0)
	}
	return cs
}

// inputFor builds one window's Input from per-channel samples, locked at 50 Hz.
func inputFor(tb testing.TB, s *Setup, x [][]float64) *Input {
	tb.Helper()
	if len(x) != len(s.Channels) {
		tb.Fatalf("inputFor: %d sample sets for %d channels", len(x), len(s.Channels))
	}
	in := &Input{Ch: make([]ChannelSums, len(x)), SumVI: make([]float64, len(s.Products)),
		FreqHz: f0, OmegaHz: f0, Lock: true}
	for c := range x {
		in.Ch[c] = dftSums(x[c], s.Orders)
	}
	for k, p := range s.Products {
		for i, v := range x[p.V] {
			in.SumVI[k] += v * x[p.I][i]
		}
	}
	return in
}

// waves samples each channel's wave over one window of n samples.
func waves(n int, ws ...wave) [][]float64 {
	x := make([][]float64, len(ws))
	for i, w := range ws {
		x[i] = sample(n, w)
	}
	return x
}

func allOrders() []int {
	o := make([]int, MaxOrder)
	for i := range o {
		o[i] = i + 1
	}
	return o
}

// singleSetup: North Weir DC-2, one drive feeder measured single-phase.
func singleSetup(tb testing.TB) *Setup {
	tb.Helper()
	s, err := NewSetup(Setup{
		Channels: []Channel{{Name: "va", Kind: Voltage, Phase: 'a'}, {Name: "ia", Kind: Current, Phase: 'a'}},
		Orders:   allOrders(), Wiring: SinglePhase, NominalV: 230, NominalI: 160, ILA: 160,
	})
	if err != nil {
		tb.Fatal(err)
	}
	return s
}

// wyeSetup: North Weir DC-2, 400/230 V four-wire, optionally a neutral CT.
func wyeSetup(tb testing.TB, neutral bool, orders []int) *Setup {
	tb.Helper()
	ch := []Channel{
		{Name: "va", Kind: Voltage, Phase: 'a'}, {Name: "vb", Kind: Voltage, Phase: 'b'}, {Name: "vc", Kind: Voltage, Phase: 'c'},
		{Name: "ia", Kind: Current, Phase: 'a'}, {Name: "ib", Kind: Current, Phase: 'b'}, {Name: "ic", Kind: Current, Phase: 'c'},
	}
	if neutral {
		ch = append(ch, Channel{Name: "in", Kind: Current, Phase: 'n'})
	}
	s, err := NewSetup(Setup{Channels: ch, Orders: orders, Wiring: Wye, NominalV: 230, NominalI: 160, ILA: 160})
	if err != nil {
		tb.Fatal(err)
	}
	return s
}

const deg = math.Pi / 180

// balancedV returns the three phase voltages of a balanced abc set of RMS v.
func balancedV(v float64) []wave {
	return []wave{cosine(v, 1, 0), cosine(v, 1, -120*deg), cosine(v, 1, 120*deg)}
}

// checkNoInf walks every float64 in r and fails on ±Inf: the contract
// allows only finite numbers or the Null marker.
func checkNoInf(tb testing.TB, r *Record) {
	tb.Helper()
	walkFloats(reflect.ValueOf(r).Elem(), "Record", func(path string, x float64) {
		if math.IsInf(x, 0) {
			tb.Errorf("%s = %v", path, x)
		}
	})
}

// nullPaths lists the paths of the Null fields of r.
func nullPaths(r *Record) string {
	var b strings.Builder
	walkFloats(reflect.ValueOf(r).Elem(), "", func(path string, x float64) {
		if IsNull(x) {
			b.WriteString(path + " ")
		}
	})
	return b.String()
}

func walkFloats(v reflect.Value, path string, f func(string, float64)) {
	switch v.Kind() {
	case reflect.Float64:
		f(path, v.Float())
	case reflect.Struct:
		for i := range v.NumField() {
			if v.Type().Field(i).IsExported() {
				walkFloats(v.Field(i), path+"."+v.Type().Field(i).Name, f)
			}
		}
	case reflect.Slice:
		for i := range v.Len() {
			walkFloats(v.Index(i), path+"["+strconv.Itoa(i)+"]", f)
		}
	}
}

// near reports whether got is within tol of want (absolute).
func near(got, want, tol float64) bool { return math.Abs(got-want) <= tol }

func valueOf(r *Record) reflect.Value { return reflect.ValueOf(r).Elem() }
