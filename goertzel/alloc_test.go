//go:build !race

package goertzel

import "testing"

// The race detector changes allocation counts, hence the build constraint.

// raceEnabled: see race_test.go.
const raceEnabled = false

func TestBankAllocs(t *testing.T) {
	const w = 50.0 / 10240
	x := drive50(2048, w, 1)
	// Both paths of Write: the vector kernels where this build and CPU have
	// them (vecOK), and the pure-Go loops.
	for _, vec := range []bool{vecOK, false} {
		b := mustBank(t, seq(1, 50))
		b.vec = vec
		dst := make([]complex128, b.Len())
		// src: STYLE.md §5, zero allocations on per-sample paths.
		for name, f := range map[string]func(){
			"Reset":   func() { b.Reset(w) },
			"Write":   func() { b.Write(x[:128]) },
			"Write1":  func() { b.Write(x[:1]) },
			"Write7":  func() { b.Write(x[:7]) },
			"Phasors": func() { b.Phasors(dst) },
			"Window":  func() { b.Reset(w); b.Write(x); b.Phasors(dst) },
		} {
			if n := testing.AllocsPerRun(100, f); n != 0 {
				t.Errorf("Bank.%s (vector kernels %v): %v allocs per call, want 0", name, vec, n)
			}
		}
	}
}

func TestSlidingAllocs(t *testing.T) {
	s := mustSliding(t, 64, []int{1, 3, 5})
	x := drive50(256, 1.0/64, 2)
	var sink complex128
	// 100 runs of 256 samples pass several periodic re-sums (every 64·64).
	// src: STYLE.md §5, zero allocations on per-sample paths.
	for name, f := range map[string]func(){
		"Push":       func() { s.Push(x[7]) },
		"Write":      func() { s.Write(x) },
		"Phasor":     func() { sink += s.Phasor(1) },
		"SumSquares": func() { sink += complex(s.SumSquares(), 0) },
	} {
		if n := testing.AllocsPerRun(100, f); n != 0 {
			t.Errorf("Sliding.%s: %v allocs per call, want 0", name, n)
		}
	}
	_ = sink
}

func TestLeakageAllocs(t *testing.T) {
	const w = 50.02 / 10240
	b := mustBank(t, seq(1, 50))
	l, err := NewLeakage(seq(1, 50))
	if err != nil {
		t.Fatal(err)
	}
	x := drive50(2047, w, 1)
	ph := make([]complex128, b.Len())
	raw := make([]complex128, b.Len())
	b.Reset(w)
	b.Write(x)
	b.Phasors(raw)
	l.Reset(w, len(x)) // the map below runs in random order: Fundamental needs n set first
	var sink float64
	// src: STYLE.md §5, zero allocations on per-window paths.
	for name, f := range map[string]func(){
		"Reset":       func() { l.Reset(w, len(x)) },
		"Solve":       func() { copy(ph, raw); d, _ := l.Solve(ph, 0); sink += d },
		"Fundamental": func() { a, _ := l.Fundamental(x, ph, 0); sink += real(a) },
		"MeanProduct": func() { sink += MeanProduct(1, 0, 0, 0, ph, ph, raw) },
	} {
		if n := testing.AllocsPerRun(20, f); n != 0 {
			t.Errorf("Leakage.%s: %v allocs per call, want 0", name, n)
		}
	}
	_ = sink
}
