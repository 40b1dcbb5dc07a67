package goertzel

import (
	"fmt"
	"math"
)

// MaxOrder is the highest harmonic order a Bank accepts. IEEE 519 and
// IEC 61000-4-7 stop at 50; the margin serves higher sample rates.
const MaxOrder = 200

// Bank evaluates the harmonic orders of one fundamental for one channel,
// streaming over one window at a time: Reset starts a window, Write feeds it
// in blocks of any size, Phasors reads every order's RMS phasor (angle at the
// window's first sample) and may be called at any point.
//
// The per-sample work is one Goertzel recurrence per order. The recurrences
// are independent, so they are run side by side in few passes over each
// block and the CPU overlaps their multiply-add chains instead of waiting on
// one: on amd64 with AVX2 and FMA, and on arm64, by vector kernels in
// assembly (bank_vec.go: up to 28 orders per pass on amd64, 20 on arm64);
// elsewhere, without those CPU features or with the purego build tag, by the
// pure-Go loops below, four orders per pass. Both compute the same sums; the
// kernels fuse the multiply-add, so results differ only in rounding. Reset,
// Write and Phasors do not allocate.
//
// A Bank is not safe for concurrent use.
type Bank struct {
	orders []int
	coef   []float64 // 2cos(ω_h), ω_h = 2π·h·w
	cos    []float64 // cos(ω_h)
	sin    []float64 // sin(ω_h)
	turns  []float64 // h·w, cycles per sample of order h
	s1     []float64 // s[n−1] per order
	s2     []float64 // s[n−2] per order
	n      uint64    // samples written since Reset

	// coef, s1 and s2 are padded to whole vectors of the kernels; the
	// padding lanes have coefficient 0 and are never read.
	vec    bool   // Write uses the vector kernels (vecOK at NewBank)
	passes []pass // the kernels' passes over each block
}

// pass is one call of a vector kernel: k vectors starting at order index off.
type pass struct{ off, k int }

// NewBank returns a Bank for the given harmonic orders, which must be
// strictly ascending and within 1..MaxOrder. The orders are copied. Call
// Reset before the first Write.
func NewBank(orders []int) (*Bank, error) {
	if len(orders) == 0 {
		return nil, fmt.Errorf("no orders: %w", ErrOrders)
	}
	for i, h := range orders {
		if h < 1 || h > MaxOrder {
			return nil, fmt.Errorf("order %d at index %d outside 1..%d: %w", h, i, MaxOrder, ErrOrders)
		}
		if i > 0 && h <= orders[i-1] {
			return nil, fmt.Errorf("order %d at index %d not above %d: %w", h, i, orders[i-1], ErrOrders)
		}
	}
	m := len(orders)
	padded := (m + vecLanes - 1) / vecLanes * vecLanes
	b := &Bank{
		orders: append([]int(nil), orders...),
		coef:   make([]float64, padded),
		cos:    make([]float64, m),
		sin:    make([]float64, m),
		turns:  make([]float64, m),
		s1:     make([]float64, padded),
		s2:     make([]float64, padded),
		vec:    vecOK,
		passes: planPasses(padded/vecLanes, vecMaxK),
	}
	return b, nil
}

// Reset starts a new window with fundamental w = f/fs (cycles per sample):
// it clears the state and sets each order's coefficient 2cos(2π·h·w). The
// results are meaningful for 0 < h·w < 0.5 for every order h (below the
// Nyquist frequency); other values do not panic but alias.
func (b *Bank) Reset(w float64) {
	for i, h := range b.orders {
		t := float64(h) * w
		s, c := math.Sincos(2 * math.Pi * (t - math.Round(t)))
		b.turns[i] = t
		b.cos[i] = c
		b.sin[i] = s
		b.coef[i] = 2 * c
	}
	clear(b.s1)
	clear(b.s2)
	b.n = 0
}

// Write feeds the next samples of the current window. Any block size works;
// splitting a window into blocks changes nothing but rounding.
func (b *Bank) Write(x []float64) {
	if len(x) == 0 {
		return
	}
	if b.vec {
		b.writeVec(x)
	} else {
		b.writeGo(x)
	}
	b.n += uint64(len(x))
}

// planPasses splits v vectors into the fewest passes of at most maxK
// vectors, as even as possible: each pass costs about the latency of one
// multiply-add chain per sample whatever its width, up to the width where
// the CPU's throughput takes over.
func planPasses(v, maxK int) []pass {
	np := (v + maxK - 1) / maxK
	ps := make([]pass, 0, np)
	off := 0
	for i := range np {
		k := v / np
		if i < v%np {
			k++
		}
		ps = append(ps, pass{off: off * vecLanes, k: k})
		off += k
	}
	return ps
}

// writeGo is Write's pure-Go path: four orders per pass.
func (b *Bank) writeGo(x []float64) {
	m := len(b.orders)
	i := 0
	for ; i+4 <= m; i += 4 {
		run4(x, b.coef[i:i+4:i+4], b.s1[i:i+4:i+4], b.s2[i:i+4:i+4])
	}
	switch m - i {
	case 3:
		run3(x, b.coef[i:i+3:i+3], b.s1[i:i+3:i+3], b.s2[i:i+3:i+3])
	case 2:
		run2(x, b.coef[i:i+2:i+2], b.s1[i:i+2:i+2], b.s2[i:i+2:i+2])
	case 1:
		run1(x, b.coef[i], &b.s1[i], &b.s2[i])
	}
}

// run4 advances four independent Goertzel recurrences over x. c, p and q
// (coefficients, s[n−1], s[n−2]) have length 4. Each step is written
// (x − s[n−2]) + c·s[n−1], so the subtraction does not wait for the
// product. Four is the widest group that stays (almost) in registers on
// amd64: Go leaves fifteen SSE registers, and eight orders (24 live values)
// spilled to the stack in every step and cost about 30 % more CPU time for
// 50 orders (user time of 10,000 windows, three alternating runs: 0.73 s vs
// 0.56 s).
func run4(x []float64, c, p, q []float64) {
	c0, c1, c2, c3 := c[0], c[1], c[2], c[3]
	a0, a1, a2, a3 := p[0], p[1], p[2], p[3]
	b0, b1, b2, b3 := q[0], q[1], q[2], q[3]
	for _, v := range x {
		t0 := (v - b0) + c0*a0
		t1 := (v - b1) + c1*a1
		t2 := (v - b2) + c2*a2
		t3 := (v - b3) + c3*a3
		b0, b1, b2, b3 = a0, a1, a2, a3
		a0, a1, a2, a3 = t0, t1, t2, t3
	}
	p[0], p[1], p[2], p[3] = a0, a1, a2, a3
	q[0], q[1], q[2], q[3] = b0, b1, b2, b3
}

// run3 is run4 for three orders.
func run3(x []float64, c, p, q []float64) {
	c0, c1, c2 := c[0], c[1], c[2]
	a0, a1, a2 := p[0], p[1], p[2]
	b0, b1, b2 := q[0], q[1], q[2]
	for _, v := range x {
		t0 := (v - b0) + c0*a0
		t1 := (v - b1) + c1*a1
		t2 := (v - b2) + c2*a2
		b0, b1, b2 = a0, a1, a2
		a0, a1, a2 = t0, t1, t2
	}
	p[0], p[1], p[2] = a0, a1, a2
	q[0], q[1], q[2] = b0, b1, b2
}

// run2 is run4 for two orders.
func run2(x []float64, c, p, q []float64) {
	c0, c1 := c[0], c[1]
	a0, a1 := p[0], p[1]
	b0, b1 := q[0], q[1]
	for _, v := range x {
		t0 := (v - b0) + c0*a0
		t1 := (v - b1) + c1*a1
		b0, b1 = a0, a1
		a0, a1 = t0, t1
	}
	p[0], p[1] = a0, a1
	q[0], q[1] = b0, b1
}

// run1 is run4 for one order.
func run1(x []float64, c float64, p, q *float64) {
	a, b := *p, *q
	for _, v := range x {
		a, b = (v-b)+c*a, a
	}
	*p, *q = a, b
}

// Phasors writes the RMS phasor of every order, in the order of Orders, for
// the samples written since Reset, with the angle at the window's first
// sample. It leaves the state untouched, so it may be called mid-window.
// Before any sample it writes zeros. It panics if len(dst) != len(Orders()).
func (b *Bank) Phasors(dst []complex128) {
	if len(dst) != len(b.orders) {
		panic(fmt.Sprintf("goertzel: Bank.Phasors: len(dst) = %d, want %d orders", len(dst), len(b.orders)))
	}
	if b.n == 0 {
		clear(dst)
		return
	}
	n := float64(b.n)
	for i := range dst {
		dst[i] = closing(b.s1[i], b.s2[i], b.cos[i], b.sin[i], b.turns[i]*n, n)
	}
}

// N returns the number of samples written since Reset (saturating at the
// largest int on 32-bit platforms).
func (b *Bank) N() int {
	if b.n > math.MaxInt {
		return math.MaxInt
	}
	return int(b.n)
}

// Orders returns a copy of the bank's harmonic orders, ascending.
func (b *Bank) Orders() []int { return append([]int(nil), b.orders...) }

// Len returns the number of orders, the length Phasors wants for dst.
func (b *Bank) Len() int { return len(b.orders) }

// Kernel names the code path Bank.Write takes on this build and CPU:
// "AVX2+FMA" (amd64 with both), "NEON" (arm64) or "pure Go" (armv7, other
// architectures, an amd64 CPU without AVX2 or FMA, the purego build tag).
// gridloupe version prints it, so a field report says which path ran.
func Kernel() string {
	if vecOK {
		return vecName
	}
	return "pure Go"
}
