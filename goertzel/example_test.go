package goertzel_test

import (
	"fmt"
	"math"
	"math/cmplx"
	"strings"

	"github.com/gridloupe/gridloupe/goertzel"
)

// deg is the phasor's angle in degrees.
func deg(x complex128) float64 { return cmplx.Phase(x) * 180 / math.Pi }

// A 230 V phase voltage at North Weir (invented site), sampled at 10.24 kHz:
// ten 50 Hz cycles are 2048 samples, read at w = 50/10240 cycles per sample.
func ExamplePhasor() {
	const fs, f = 10240.0, 50.0
	x := make([]float64, 2048)
	for n := range x {
		x[n] = 230 * math.Sqrt2 * math.Cos(2*math.Pi*f/fs*float64(n)-math.Pi/6)
	}
	v := goertzel.Phasor(x, f/fs)
	fmt.Printf("%.1f V at %.1f°\n", cmplx.Abs(v), deg(v))
	// Output: 230.0 V at -30.0°
}

// A pump drive's input current at North Weir cabinet DC-2 (invented): a
// 45.8 A fundamental with 5th and 7th harmonics, fed to a bank in 128-sample
// blocks as a source would deliver them.
func ExampleBank() {
	const fs, f = 10240.0, 50.0
	w := f / fs
	x := make([]float64, 2048)
	for n := range x {
		ph := 2 * math.Pi * w * float64(n)
		x[n] = math.Sqrt2 * (45.8*math.Cos(ph-0.21) + 9.1*math.Cos(5*ph+2.9) + 5.4*math.Cos(7*ph-0.8))
	}
	bank, err := goertzel.NewBank([]int{1, 5, 7, 11})
	if err != nil {
		fmt.Println(err)
		return
	}
	bank.Reset(w)
	for i := 0; i < len(x); i += 128 {
		bank.Write(x[i : i+128])
	}
	ph := make([]complex128, bank.Len())
	bank.Phasors(ph)
	for i, h := range bank.Orders() {
		// An angle below 0.1 % of the fundamental is noise (DESIGN.md).
		if cmplx.Abs(ph[i]) < 1e-3*cmplx.Abs(ph[0]) {
			fmt.Printf("h=%-2d %5.2f A\n", h, cmplx.Abs(ph[i]))
			continue
		}
		fmt.Printf("h=%-2d %5.2f A  %6.1f°\n", h, cmplx.Abs(ph[i]), deg(ph[i]))
	}
	// Output:
	// h=1  45.80 A   -12.0°
	// h=5   9.10 A   166.2°
	// h=7   5.40 A   -45.8°
	// h=11  0.00 A
}

// Urms(1/2) through a voltage dip: a one-cycle window (128 samples at
// 6.4 kHz, 50 Hz) read every half cycle. The supply drops to 70 % for two
// cycles starting at a zero crossing.
func ExampleSliding() {
	const n = 128
	s, err := goertzel.NewSliding(n, []int{1})
	if err != nil {
		fmt.Println(err)
		return
	}
	var line []string
	for m := range 6 * n {
		a := 230.0
		if m >= 2*n && m < 4*n {
			a = 161
		}
		s.Push(a * math.Sqrt2 * math.Sin(2*math.Pi*float64(m)/n))
		if m >= n-1 && (m+1)%(n/2) == 0 {
			line = append(line, fmt.Sprintf("%.1f", math.Sqrt(s.SumSquares()/n)))
		}
	}
	fmt.Println(strings.Join(line, " "))
	fmt.Printf("fundamental %.1f V\n", cmplx.Abs(s.Phasor(0)))
	// Output:
	// 230.0 230.0 230.0 198.5 161.0 161.0 161.0 198.5 230.0 230.0 230.0
	// fundamental 230.0 V
}
