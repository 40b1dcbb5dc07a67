package sim

import (
	"math"
	"testing"
	"time"
)

// modelTol bounds float64 round-off in the model's closed forms.
const modelTol = 1e-12

func TestLoadProfile(t *testing.T) {
	t.Parallel()
	cases := []struct {
		name string
		hour float64
		want float64
		src  string
	}{
		{"knot 03:00", 3, 0.27, "dailyLoad table (invented, no source)"},
		{"knot 10:00", 10, 0.90, "dailyLoad table"},
		{"knot 23:00", 23, 0.32, "dailyLoad table"},
		{"midnight wraps", 24, 0.30, "dailyLoad table, period 24 h"},
		{"negative hour wraps", -1, 0.32, "dailyLoad table, period 24 h"},
		{"half way 06:30", 6.5, (0.55 + 0.75) / 2, "cosine interpolation: weight 1/2 at mid-interval (closed form)"},
	}
	for _, tc := range cases {
		if got := loadAtHour(tc.hour); math.Abs(got-tc.want) > modelTol {
			t.Errorf("%s: %v, want %v (%s)", tc.name, got, tc.want, tc.src)
		}
	}
	// Smooth: per one-minute step the load moves at most maxStep, and the
	// step changes by at most maxStepJump (a continuous slope).
	// Cosine interpolation of a knot step Δ has peak slope Δ·π/2 per hour
	// and curvature Δ·π²/2 per hour² (closed form); the largest Δ is 0.20.
	const maxStep = 0.20 * math.Pi / 2 / 60                 // 0.0052 per minute
	const maxStepJump = 0.20 * math.Pi * math.Pi / 2 / 3600 // 2.7e-4; a kink would jump by ~3e-3
	prev, prevD := loadAtHour(0), 0.0
	for m := 1; m <= 24*60; m++ {
		l := loadAtHour(float64(m) / 60)
		d := l - prev
		if math.Abs(d) > maxStep+modelTol {
			t.Fatalf("minute %d: step %v too large", m, d)
		}
		if m > 1 && math.Abs(d-prevD) > maxStepJump+modelTol {
			t.Fatalf("minute %d: slope jumps from %v to %v", m, prevD, d)
		}
		prev, prevD = l, d
	}
	if loadAtHour(3) >= loadAtHour(11) {
		t.Error("night load not below the pumping hours (invented scenario, DESIGN, Scenario)")
	}
	// Start's location sets the hour.
	cet := time.FixedZone("UTC+1", 3600)
	if got := secondsOfDay(time.Date(2026, 3, 1, 2, 30, 0, 500e6, cet)); got != 2*3600+30*60+0.5 {
		t.Errorf("secondsOfDay %v", got)
	}
}

func TestWanderBounded(t *testing.T) {
	t.Parallel()
	ph := [3]float64{0.3, 2.1, 4.4}
	var lo, hi float64
	for s := 0.0; s < 86400; s += 5 {
		d := wanderHz(s, ph)
		lo, hi = min(lo, d), max(hi, d)
	}
	// Brief: ±0.05 Hz; the amplitudes sum to 0.05 Hz (closed form bound).
	if lo < -0.05-modelTol || hi > 0.05+modelTol {
		t.Errorf("wander %v..%v Hz, want within ±0.05 Hz", lo, hi)
	}
	if hi-lo < 0.05 {
		t.Errorf("wander spans only %v Hz over a day; want a visible wander", hi-lo)
	}
}

func TestConditionProfile(t *testing.T) {
	t.Parallel()
	p := FilterProfile{Period: time.Hour, Worst: 0.25}
	cases := []struct {
		tS, want float64
	}{{0, 1}, {900, 0.625}, {1800, 0.25}, {3600, 1}, {5400, 0.25}}
	for _, tc := range cases {
		// Source: c(t) = 1 − (1 − Worst)(1 − cos 2πt/P)/2, the documented form.
		if got := conditionAt(p, tc.tS); math.Abs(got-tc.want) > modelTol {
			t.Errorf("t=%v s: %v, want %v", tc.tS, got, tc.want)
		}
	}
	if got := conditionAt(FilterProfile{Worst: 0}, 1234); got != 1 {
		t.Errorf("zero period: %v, want 1 (constant healthy)", got)
	}
}

func TestHarmonicRatioLaw(t *testing.T) {
	t.Parallel()
	// Non-characteristic orders are absent: six-pulse characteristic
	// orders are 6k ± 1 (closed form).
	for h := 1; h <= MaxOrder; h++ {
		char := h >= 5 && (h%6 == 1 || h%6 == 5)
		if r := harmonicRatio(h, 0.7, 0.5); (r > 0) != char {
			t.Errorf("h%d: ratio %v, characteristic %v", h, r, char)
		}
	}
	thd := func(load, cond float64) float64 {
		var s float64
		for h := 5; h <= 49; h++ {
			r := harmonicRatio(h, load, cond)
			s += r * r
		}
		return math.Sqrt(s)
	}
	bands := []struct {
		name                   string
		load, cond             float64
		i5Lo, i5Hi, thLo, thHi float64
		src                    string
	}{
		{"healthy reactor, full load", 1, 1, 0.30, 0.35, 0.30, 0.45,
			"invented scenario, DESIGN, Scenario for demo data and examples: I5/I1 ≈ 30–35 %; closed form: chokes bring THD_I toward 30–45 % (from memory, not a test value)"},
		{"no reactor effect, full load", 1, 0, 0.60, 0.80, 0.80, 1.20,
			"invented scenario, DESIGN, Scenario for demo data and examples: I5/I1 ≈ 60–80 %; closed form: no chokes, THD_I 80–120 % (from memory, not a test value)"},
	}
	for _, b := range bands {
		i5, th := harmonicRatio(5, b.load, b.cond), thd(b.load, b.cond)
		if i5 < b.i5Lo || i5 > b.i5Hi || th < b.thLo || th > b.thHi {
			t.Errorf("%s: I5/I1 %.3f THD_I %.3f, want bands [%v,%v] [%v,%v] (%s)",
				b.name, i5, th, b.i5Lo, b.i5Hi, b.thLo, b.thHi, b.src)
		}
	}
	// Monotone on a grid: ratios fall with load and with condition; the
	// harmonic current per IL (ratio·load) rises with load. Model
	// properties (common practice, no source).
	for _, h := range []int{5, 7, 11, 13, 25, 49} {
		for c := 0.0; c <= 1; c += 0.125 {
			for l := 0.1; l < 2; l += 0.05 {
				r, rl, rc := harmonicRatio(h, l, c), harmonicRatio(h, l+0.05, c), harmonicRatio(h, l, c+0.125)
				if rl >= r || (c < 1 && rc >= r) || rl*(l+0.05) <= r*l {
					t.Fatalf("h%d load %.2f cond %.3f: not monotone (%v, %v, %v)", h, l, c, r, rl, rc)
				}
				if r >= 1 {
					t.Fatalf("h%d load %.2f cond %.3f: Ih/I1 = %v ≥ 1", h, l, c, r)
				}
			}
		}
	}
	// The base shape is 1/h (closed form): in the small-ratio limit and with
	// β = 0 the model would give exactly I7/I5 = 5/7. With β = 1 (healthy)
	// the unsaturated ratio is (5/7)² — check through the inverse of s.
	unsat := func(y float64) float64 { return y / math.Sqrt(1-y*y) }
	got := unsat(harmonicRatio(7, 1, 1)) / unsat(harmonicRatio(5, 1, 1))
	if want := math.Pow(5.0/7, 2); math.Abs(got-want) > modelTol {
		t.Errorf("unsaturated I7/I5 %v, want (5/7)^(1+β) = %v (1/h law, closed form, times (5/h)^β)", got, want)
	}
}

func TestDPF(t *testing.T) {
	t.Parallel()
	for _, l := range []float64{0, 0.5, 1} {
		// Brief: DPF 0.97–0.99 lagging.
		if d := dpfAt(l); d < 0.97-modelTol || d > 0.99+modelTol {
			t.Errorf("load %v: DPF %v", l, d)
		}
	}
}

func TestOffsetExact(t *testing.T) {
	t.Parallel()
	s := &Source{fs: 10240}
	// 2^40 samples at 10.24 kHz: quotient and remainder keep nanoseconds
	// exact (DESIGN, Time).
	n := uint64(1) << 40
	want := time.Duration(n/10240)*time.Second + time.Duration(n%10240)*time.Second/10240
	if got := s.offset(n); got != want {
		t.Errorf("offset %v, want %v", got, want)
	}
}
