package goertzel

import (
	"bytes"
	"fmt"
	"math"
	"math/cmplx"
	"os"
	"os/exec"
	"path/filepath"
	"testing"
)

// vecRelTol bounds the difference between the vector kernels and the pure-Go
// loops, relative to the fundamental's magnitude. The project's own bound
// (common practice, no source): both evaluate the same recurrence, and the
// kernels differ only by fusing the multiply-add, a rounding difference of
// the order of 1e-16 per step that the recurrence carries over a window.
// About 2x the worst case measured: 1.76e-13 with AVX2+FMA; 0 on arm64
// (run under qemu), where the Go compiler fuses the pure-Go loops'
// multiply-add too. TestBankVecMatchesGo logs the worst case it sees.
const vecRelTol = 4e-13

// goBank is NewBank forced onto the pure-Go loops, the reference for the
// kernels.
func goBank(tb testing.TB, orders []int) *Bank {
	tb.Helper()
	b := mustBank(tb, orders)
	b.vec = false
	return b
}

// awkward is a supply voltage at w with small harmonics at every order of
// orders above 1 (0.05 % to 3 % of the fundamental, phases from the seeded
// generator) and a little noise: the case where rounding differences
// between the two paths would show first, relative to the small orders.
func awkward(n int, w float64, orders []int, seed uint64) []float64 {
	rng := newRand(seed)
	tones := []tone{{w: w, rms: 230, phase: 0.3}}
	for _, h := range orders {
		if h == 1 {
			continue
		}
		pct := []float64{0.05, 0.5, 3}[h%3]
		tones = append(tones, tone{w: float64(h) * w, rms: 230 * pct / 100, phase: 2 * math.Pi * rng.Float64()})
	}
	return synth(n, tones, 0.02, rng)
}

func TestBankVecMatchesGo(t *testing.T) {
	t.Parallel()
	if !vecOK {
		t.Skip("no vector kernel on this build or CPU: Bank runs the pure-Go loops only")
	}
	// 50.02 Hz: 10 cycles are 2047.18 samples at 10.24 kHz (not whole);
	// 59.97 Hz at 12.8 kHz; 200 orders need h·w < 0.5, so 50.02 Hz at 25.6 kHz.
	odd := []int{2, 3, 5, 8, 13, 21, 34, 49, 50}
	tests := []struct {
		orders []int
		w      float64
	}{
		{[]int{1}, 50.02 / 10240},
		{[]int{7}, 50.02 / 10240},
		{seq(1, 3), 50.02 / 10240},
		{seq(1, 5), 59.97 / 12800},
		{odd, 50.02 / 10240},
		{sixPulse, 50.02 / 10240},
		{sixPulse, 59.97 / 12800},
		{seq(1, 29), 50.02 / 10240},
		{seq(1, 50), 50.02 / 10240},
		{seq(1, 50), 59.97 / 12800},
		{seq(1, 57), 50.02 / 25600},
		{seq(1, MaxOrder), 50.02 / 25600},
	}
	worst := 0.0
	for _, tc := range tests {
		for _, n := range []int{1, 2, 3, 7, 2047, 2048} {
			x := awkward(n, tc.w, tc.orders, uint64(n))
			for _, blk := range []int{1, 3, 7, 2047} {
				name := fmt.Sprintf("%d orders from %d, w=%.6g, N=%d, blocks of %d", len(tc.orders), tc.orders[0], tc.w, n, blk)
				want := writeBlocks(goBank(t, tc.orders), tc.w, x, blk)
				vb := mustBank(t, tc.orders)
				got := writeBlocks(vb, tc.w, x, blk)
				fund := cmplx.Abs(directDFT(x, tc.w))
				if n < 7 {
					fund = math.Sqrt2 * rmsOf(x) // a few samples hold no cycle yet
				}
				for i, h := range tc.orders {
					d := cmplx.Abs(got[i] - want[i])
					worst = max(worst, d/fund)
					// src: vecRelTol (the project's own bound, above).
					if d > vecRelTol*fund {
						t.Errorf("%s: h=%d kernel %v, Go %v, |Δ| %.3g of the fundamental", name, h, got[i], want[i], d/fund)
					}
				}
				if vb.N() != n {
					t.Errorf("%s: N() = %d, want %d", name, vb.N(), n)
				}
			}
		}
	}
	// Every kernel width once: 1..vecMaxK vectors in a single pass, each
	// with its lanes partly filled and full.
	const w = 50.02 / 10240
	x := awkward(2047, w, seq(1, 50), 5)
	fund := cmplx.Abs(directDFT(x, w))
	for m := 1; m <= vecMaxK*vecLanes; m++ {
		orders := seq(1, m)
		want := writeBlocks(goBank(t, orders), w, x, 7)
		got := writeBlocks(mustBank(t, orders), w, x, 7)
		for i, h := range orders {
			d := cmplx.Abs(got[i] - want[i])
			worst = max(worst, d/fund)
			// src: vecRelTol (the project's own bound, above).
			if d > vecRelTol*fund {
				t.Errorf("%d orders (one pass): h=%d kernel %v, Go %v, |Δ| %.3g of the fundamental", m, h, got[i], want[i], d/fund)
			}
		}
	}
	t.Logf("worst |kernel − Go| %.3g of the fundamental", worst)
}

// writeBlocks resets b to w, writes x in blocks of blk and returns the
// phasors.
func writeBlocks(b *Bank, w float64, x []float64, blk int) []complex128 {
	b.Reset(w)
	for i := 0; i < len(x); i += blk {
		b.Write(x[i:min(len(x), i+blk)])
	}
	dst := make([]complex128, b.Len())
	b.Phasors(dst)
	return dst
}

func TestBankVecAccuracy(t *testing.T) {
	t.Parallel()
	// The kernels against the definition directly, not only against the Go
	// loops: every order of 1..50 over a 10-cycle window at 50.02 Hz.
	const w = 50.02 / 10240
	orders := seq(1, 50)
	x := awkward(2047, w, orders, 3)
	got := bankPhasors(t, orders, w, x)
	scale := math.Sqrt2 * rmsOf(x)
	for i, h := range orders {
		// src: definition X = (√2/N)·Σ x[n]·e^{−j2π·h·w·n} (doc.go), direct sum.
		if want := directDFT(x, float64(h)*w); !closeTo(got[i], want, dftRelTol*scale) {
			t.Errorf("h=%d: bank %v, direct %v", h, got[i], want)
		}
	}
}

func TestPlanPasses(t *testing.T) {
	t.Parallel()
	// src: planPasses' contract (fewest passes of at most maxK vectors, as
	// even as possible, covering every vector once in order); common
	// practice, no source.
	tests := []struct {
		v, maxK int
		want    []int // k of each pass
	}{
		{1, 7, []int{1}},
		{5, 7, []int{5}},
		{7, 7, []int{7}},
		{8, 7, []int{4, 4}},
		{13, 7, []int{7, 6}},
		{25, 10, []int{9, 8, 8}},
		{50, 7, []int{7, 7, 6, 6, 6, 6, 6, 6}},
		{3, 1, []int{1, 1, 1}},
	}
	for _, tc := range tests {
		ps := planPasses(tc.v, tc.maxK)
		if len(ps) != len(tc.want) {
			t.Errorf("planPasses(%d, %d) = %v, want k %v", tc.v, tc.maxK, ps, tc.want)
			continue
		}
		off := 0
		for i, p := range ps {
			if p.k != tc.want[i] || p.off != off*vecLanes {
				t.Errorf("planPasses(%d, %d)[%d] = %+v, want k %d at lane %d", tc.v, tc.maxK, i, p, tc.want[i], off*vecLanes)
			}
			off += p.k
		}
	}
}

func TestAsmGenerated(t *testing.T) {
	if testing.Short() {
		t.Skip("builds and runs the generator: not in -short mode")
	}
	goTool, err := exec.LookPath("go")
	if err != nil {
		t.Skipf("no go command to run asmgen.go: %v", err)
	}
	dir := t.TempDir()
	cmd := exec.Command(goTool, "run", "asmgen.go", "-dir", dir)
	// The generator runs on the host: a cross test (GOARCH=arm64 with
	// -exec qemu) must not build it for the target.
	cmd.Env = append(os.Environ(), "GOOS=", "GOARCH=", "GOARM=", "GOFLAGS=")
	if out, err := cmd.CombinedOutput(); err != nil {
		t.Fatalf("go run asmgen.go: %v\n%s", err, out)
	}
	for _, name := range []string{"bank_amd64.s", "bank_arm64.s"} {
		want, err := os.ReadFile(filepath.Join(dir, name))
		if err != nil {
			t.Fatal(err)
		}
		got, err := os.ReadFile(name)
		if err != nil {
			t.Fatal(err)
		}
		// src: asmgen.go is the source of the committed kernels (its doc comment).
		if !bytes.Equal(got, want) {
			t.Errorf("%s differs from what asmgen.go writes: run go generate ./goertzel/", name)
		}
	}
}

// TestKernelName: the name Kernel reports follows the path Write takes
// (bank_*.go build files: vecOK and vecName; common practice, no source).
func TestKernelName(t *testing.T) {
	want := "pure Go"
	if vecOK {
		want = vecName
	}
	if got := Kernel(); got != want || got == "" {
		t.Errorf("Kernel() = %q, want %q", got, want)
	}
	if b, _ := NewBank([]int{1}); b.vec != vecOK {
		t.Errorf("Bank.vec = %v, want vecOK %v", b.vec, vecOK)
	}
}
