//go:build amd64 && !purego

package goertzel

import (
	"math"
	"math/cmplx"
	"testing"
)

// TestDot2AVX: the AVX2 kernel against the pure-Go sums for every length
// 0–41 (the eight-wide body, the four-wide step and the one-at-a-time
// tail), on values of mixed sign and size: equal to 1e-13 of Σ|x·y|
// (common practice, no source: a few hundred times float64 rounding, the
// two differing only in the order of the additions).
func TestDot2AVX(t *testing.T) {
	if !dotVec {
		t.Skip("this CPU has no AVX2 and FMA: only the Go sums run")
	}
	rng := newRand(5)
	for n := range 42 {
		x, y, z := make([]float64, n), make([]float64, n), make([]float64, n)
		var ay, az float64
		for i := range n {
			x[i] = (rng.Float64() - 0.5) * math.Pow(10, 4*rng.Float64()-2)
			y[i], z[i] = rng.Float64()-0.5, (rng.Float64()-0.5)*1e-4
			ay += math.Abs(x[i] * y[i])
			az += math.Abs(x[i] * z[i])
		}
		gy, gz := dot2AVX(x, y, z)
		wy, wz := dot(x, y), dot(x, z)
		if math.Abs(gy-wy) > 1e-13*ay || math.Abs(gz-wz) > 1e-13*az {
			t.Errorf("length %d: kernel %v, %v; Go sums %v, %v", n, gy, gz, wy, wz)
		}
	}
}

// TestLeakageVecAgrees: Solve with the vector kernel and with the pure-Go
// sums gives the same phasors to 1e-12 of the fundamental (the project's
// rule for a kernel beside its fallback) on TestLeakageExact's 50.02 Hz
// case.
func TestLeakageVecAgrees(t *testing.T) {
	if !dotVec {
		t.Skip("this CPU has no AVX2 and FMA: only the Go sums run")
	}
	const fs, f, n = 10240.0, 50.02, 2047
	w := f / fs
	orders := seq(1, 50)
	rng := newRand(8)
	tones := []tone{{w, 230, 0.3}}
	for h := 2; h <= 50; h++ {
		tones = append(tones, tone{float64(h) * w, 230 * (0.0005 + 0.0295*rng.Float64()), 6 * rng.Float64()})
	}
	x := synth(n, tones, 0, nil)
	b, _ := NewBank(orders)
	b.Reset(w)
	b.Write(x)
	raw := make([]complex128, len(orders))
	b.Phasors(raw)
	var got [2][]complex128
	for k, vec := range []bool{true, false} {
		l, err := NewLeakage(orders)
		if err != nil {
			t.Fatal(err)
		}
		l.vec = vec
		l.Reset(w, n)
		got[k] = append([]complex128(nil), raw...)
		if _, ok := l.Solve(got[k], 0); !ok {
			t.Fatalf("vec %v: not converged", vec)
		}
	}
	for i := range orders {
		if d := cmplx.Abs(got[0][i]-got[1][i]) / 230; d > 1e-12 {
			t.Errorf("order %d: kernel %v, Go %v: %.2g of the fundamental apart", orders[i], got[0][i], got[1][i], d)
		}
	}
}
