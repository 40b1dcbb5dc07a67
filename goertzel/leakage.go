package goertzel

import (
	"fmt"
	"math"
	"math/cmplx"
)

// Leakage turns the phasors a Bank measured over a window of N whole samples
// into those of a window holding exactly a whole number of cycles of the
// fundamental, for a signal made of DC and the bank's harmonic orders.
//
// Why it is needed. A 10-cycle window at 50.02 Hz and 10.24 kHz is 2047.18
// samples long; a window can only take whole samples, and over 2047 (or
// 2048) of them the harmonics are no longer orthogonal: every component
// leaks about (N − L)/N of itself into every other bin, and the fundamental
// (a hundred to a thousand times the small orders) swamps them.
//
// Method. Over N samples the DFT sum at ω_k = k·ω of the model
//
//	x[n] = d + Σ_h (c_h·e^{jω_h n} + c̄_h·e^{−jω_h n})
//
// is exactly Y_k = Σ_h (c_h·D((h−k)ω) + c̄_h·D(−(h+k)ω)) + d·D(−kω), with the
// Dirichlet kernel D(θ) = Σ_{n<N} e^{jθn} = e^{jθ(N−1)/2}·sin(Nθ/2)/sin(θ/2),
// and the sample sum is Σx = N·d + Σ_h 2Re(c_h·D(ω_h)). D(0) = N and every
// other D is at most about |N − L|·π/2, so the system is the identity plus a
// small perturbation; Solve inverts it by Jacobi iteration, each step
// shrinking the error by about 2·M·|N − L|/N for M orders (3 % for 50
// orders with |N − L| < 0.6 samples). The c_h found are the complex
// amplitudes of a synchronized window, exactly, for any N near L; the
// kernel depends only on ω and N, so it is computed once per window for all
// channels (Reset) and costs O(M) sines; each channel then costs O(M²) per
// iteration, a few per cent of the bank's O(M·N).
//
// Components outside the model (interharmonics, noise, orders the bank does
// not compute) are not corrected: they leak as in any window that does not
// hold whole cycles of them. The residual a model leaves is orthogonal to
// it over the N samples, which makes the exact sums of MeanProduct possible.
//
// A Leakage is not safe for concurrent use. Reset, Solve and the other
// methods do not allocate.
type Leakage struct {
	orders []int
	k      []complex128 // k[j+off] = D(j·ω)/N for j = −2·max order..2·max order
	off    int
	y      []complex128 // scratch: the measured values, c units
	c      []complex128 // scratch: the solution, c units
	d      []complex128 // scratch: the last iterate's difference
	p      []complex128 // scratch: the one before
	nz     []int32      // scratch: entries of p that still move
	w      float64
	n      int
}

// Solve's iteration limits.
const (
	// leakTol is the change, relative to the largest amplitude, at which the
	// iteration stops: 23 µV on a 230 V fundamental, about float32 storage
	// (1.4e-5 V there) and more than three orders under class I's floor
	// (0.115 V at 230 V). At 1e-9 the last iterations cost about a quarter
	// of the correction's time (5 % of a replay's CPU) for digits no output
	// keeps.
	leakTol = 1e-7
	// leakIter caps the iterations; with |N − L| within 0.3 % of N for 50
	// orders the error shrinks by about 4 per step, so 30 are ample, and a
	// window that needs more is reported as not converged.
	leakIter = 30
)

// NewLeakage returns a correction for the given orders (as NewBank: strictly
// ascending, within 1..MaxOrder). Call Reset before Solve.
func NewLeakage(orders []int) (*Leakage, error) {
	if _, err := NewBank(orders); err != nil {
		return nil, err
	}
	m := len(orders)
	return &Leakage{
		orders: append([]int(nil), orders...),
		k:      make([]complex128, 4*orders[m-1]+1),
		off:    2 * orders[m-1],
		y:      make([]complex128, m),
		c:      make([]complex128, m),
		d:      make([]complex128, m),
		p:      make([]complex128, m),
		nz:     make([]int32, 0, m),
	}, nil
}

// Reset sets the fundamental w = f/fs (cycles per sample) and the window
// length n in samples, and computes the kernel.
func (l *Leakage) Reset(w float64, n int) {
	l.w, l.n = w, n
	for j := 0; j <= l.off; j++ {
		d := dirichlet(float64(j)*w, n) / complex(float64(n), 0)
		l.k[l.off+j] = d
		l.k[l.off-j] = cmplx.Conj(d)
	}
}

// dirichlet returns D(2π·t) = Σ_{m<n} e^{j2π·t·m} for t in turns per sample.
func dirichlet(t float64, n int) complex128 {
	r := t - math.Round(t)
	s := math.Sin(math.Pi * r)
	nf := float64(n)
	if math.Abs(s) < 1e-300 || math.Abs(r) < 1e-15 {
		return complex(nf, 0)
	}
	tn := r * nf
	num := math.Sin(math.Pi * (tn - 2*math.Round(tn/2)))
	return cisTurns(r*(nf-1)/2) * complex(num/s, 0)
}

// kern returns D(j·ω)/N for any integer j (D(−θ) is the conjugate of D(θ)).
func (l *Leakage) kern(j int) complex128 { return l.k[l.off+j] }

// Solve corrects x in place: on entry the RMS phasors a Bank with the same
// orders, reset with the same w, wrote after n samples; on return the RMS
// phasors of the synchronized window. mean is the window's sample mean
// (Σx/n); Solve returns the corrected DC value and whether the iteration
// converged (it fails to only when n is far from a whole number of cycles,
// or on NaN input). It panics if len(x) != the number of orders.
func (l *Leakage) Solve(x []complex128, mean float64) (dc float64, ok bool) {
	if len(x) != len(l.orders) {
		panic(fmt.Sprintf("goertzel: Leakage.Solve: len(x) = %d, want %d orders", len(x), len(l.orders)))
	}
	y, c, d := l.y, l.c, l.d
	big := 0.0
	for i, v := range x {
		y[i] = v / math.Sqrt2 // c units: the component is 2Re(c·e^{jωn})
		c[i] = y[i]
		big = max(big, abs2(y[i]))
	}
	big = max(big, mean*mean)
	// Jacobi iteration in difference form. The equations are c = y − E(c)
	// with E linear (the off-diagonal kernel terms, DC included), so the
	// iterates' differences obey Δ⁽ᵏ⁺¹⁾ = −E(Δ⁽ᵏ⁾). The first difference
	// involves every amplitude; later ones only the few that still move
	// (the large components), so each later step costs O(M) per entry that
	// moved instead of O(M²).
	dc = mean
	ddc := l.apply(c, mean, d) // Δ⁽¹⁾ = −E(y), the initial guess being y and the mean
	tol2 := leakTol * leakTol * big
	// an entry that moves by Δ moves the others by at most about
	// |Δ|·max|K|·2M; entries whose effect stays a tenth under the
	// tolerance are left out of the next difference
	kmax := 0.0
	for j := 1; j <= l.off; j++ {
		kmax = max(kmax, abs2(l.k[l.off+j]))
	}
	skip := tol2 / (100 * max(kmax, 1e-300) * float64(4*len(c)*len(c)))
	prevMoved := math.Inf(1)
	for it := 0; ; it++ {
		moved := ddc * ddc
		for i := range c {
			c[i] += d[i]
			moved = max(moved, abs2(d[i]))
		}
		dc += ddc
		// the error left after this step is about moved·ρ/(1 − ρ), with
		// the contraction ρ estimated from the last two steps
		rho := 0.5 // unknown after the first step
		if it > 0 {
			rho = min(0.5, math.Sqrt(moved/prevMoved))
		}
		if rest := moved * rho * rho / ((1 - rho) * (1 - rho)); rest <= tol2 || moved <= tol2 {
			ok = true
			break
		}
		prevMoved = moved
		if it == leakIter {
			break
		}
		ddc = l.applySparse(d, ddc, skip)
	}
	for i := range x {
		x[i] = c[i] * math.Sqrt2
	}
	return dc, ok && !math.IsNaN(dc)
}

// apply writes −E(v) into out, where E holds the off-diagonal terms of
// Solve's equations: for order k, Σ_{h≠k} v_h·K(h−k) + Σ_h v̄_h·K(−h−k) +
// vdc·K(−k); for DC, Σ_h 2Re(v_h·K(h)). It returns the DC entry.
func (l *Leakage) apply(v []complex128, vdc float64, out []complex128) float64 {
	var ddc float64
	for j, h := range l.orders {
		ddc -= 2 * real(v[j]*l.kern(h))
	}
	for i, k := range l.orders {
		kk := l.k[l.off-k:]   // kk[h] = K(h − k)
		kn := l.k[:l.off-k+1] // kn[off−k−h] = K(−h − k)
		s := -complex(vdc, 0) * l.kern(-k)
		for j, h := range l.orders {
			vj := v[j]
			s -= vj*kk[h] + complex(real(vj), -imag(vj))*kn[l.off-k-h]
		}
		s += v[i] * kk[k] // the diagonal term was subtracted with the rest
		out[i] = s
	}
	return ddc
}

// applySparse replaces d by −E(d) (ddc its DC entry), skipping entries
// whose squared magnitude is at most skip: their effect is below the
// tolerance. It returns the new DC entry.
func (l *Leakage) applySparse(d []complex128, ddc, skip float64) float64 {
	nz := l.nz[:0]
	for j := range d {
		if abs2(d[j]) > skip {
			nz = append(nz, int32(j))
		}
	}
	l.nz = nz
	prev := l.p
	copy(prev, d)
	var ndc float64
	for _, j := range nz {
		ndc -= 2 * real(prev[j]*l.kern(l.orders[j]))
	}
	useDC := ddc*ddc > skip
	for i, k := range l.orders {
		var s complex128
		if useDC {
			s = -complex(ddc, 0) * l.kern(-k)
		}
		for _, j := range nz {
			h := l.orders[j]
			vj := prev[j]
			if int(j) != i {
				s -= vj * l.kern(h-k)
			}
			s -= complex(real(vj), -imag(vj)) * l.kern(-h-k)
		}
		d[i] = s
	}
	return ndc
}

// MeanProduct returns the mean of a·b over the synchronized window, from the
// mean over the n whole samples (meanAB = Σa·b/n) and the two channels'
// models: a's and b's corrected phasors xa, xb and DC values dcA, dcB (from
// Solve), b's uncorrected phasors rawB and b's sample mean meanB. With a = b
// it is the mean square. Derivation: the residual r = x − model of each
// channel is orthogonal to every model term over the n samples (that is what
// Solve's equations say), so Σ r_a·r_b = Σ a·b − Σ model_a·b, and
// Σ model_a·b = n·(dcA·meanB + Σ_h Re(xa_h·conj(rawB_h))) in RMS phasors;
// the synchronized window's mean is the models' exact product
// dcA·dcB + Σ_h Re(xa_h·conj(xb_h)) plus that residual part.
func MeanProduct(meanAB, dcA, dcB, meanB float64, xa, xb, rawB []complex128) float64 {
	exact := dcA * dcB
	model := dcA * meanB
	for i, a := range xa {
		exact += real(a * cmplx.Conj(xb[i]))
		model += real(a * cmplx.Conj(rawB[i]))
	}
	return exact + meanAB - model
}

// Fundamental returns the DFT sums at the fundamental ω = 2π·w over x (the
// window's n samples, n as in Reset) and over its first half, with every
// other modelled component removed: the fundamental's negative-frequency
// image, DC and the other orders (x1 is the corrected fundamental, dc the DC
// value, x the corrected phasors of all orders from Solve, fundamental
// first). On a window whose length is not a whole number of cycles these
// components do not cancel over the halves, and they bias a frequency taken
// from the two halves' phase difference. It panics if len(samples) != n.
func (l *Leakage) Fundamental(samples []float64, x []complex128, dc float64) (full, half complex128) {
	if len(samples) != l.n {
		panic(fmt.Sprintf("goertzel: Leakage.Fundamental: %d samples, want %d", len(samples), l.n))
	}
	n, m := l.n, l.n/2
	full = Phasor(samples, l.w) * complex(float64(n)/math.Sqrt2, 0)
	half = Phasor(samples[:m], l.w) * complex(float64(m)/math.Sqrt2, 0)
	full -= complex(dc, 0) * dirichlet(-l.w, n)
	half -= complex(dc, 0) * dirichlet(-l.w, m)
	for i, h := range l.orders {
		c := x[i] / math.Sqrt2
		hf := float64(h)
		if h != 1 {
			full -= c * dirichlet((hf-1)*l.w, n)
			half -= c * dirichlet((hf-1)*l.w, m)
		}
		full -= cmplx.Conj(c) * dirichlet(-(hf+1)*l.w, n)
		half -= cmplx.Conj(c) * dirichlet(-(hf+1)*l.w, m)
	}
	return full, half
}

func abs2(z complex128) float64 { return real(z)*real(z) + imag(z)*imag(z) }
