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
	// e is −E, the off-diagonal part of the equations, in real form, row
	// by row: for v_j = a_j + j·b_j, −E(v)_i = Σ_j a_j·P_ij + b_j·Q_ij with
	// P = −(K(h−k) + K(−h−k)) and Q = −j·(K(h−k) − K(−h−k)) (K(h−k) left
	// out on the diagonal); conjugation makes E real-linear, not
	// complex-linear. Row i is 4·M floats: Re P_i0, Re Q_i0, Re P_i1, …
	// (the real part of −E(v)_i is their dot product with a_0, b_0, a_1,
	// …), then the imaginary parts likewise. That is 4 multiply-adds per
	// entry instead of two complex products (8), over contiguous memory;
	// 4·M² floats, 80 kB for 50 orders.
	e     []float64
	dcIn  []float64    // dcIn[2j:][:2]: the DC entry of −E(v) is Σ_j a_j·dcIn[2j] + b_j·dcIn[2j+1]
	dcOut []complex128 // dcOut[i] = −K(−k): order i's share of the DC entry
	kmax  float64      // max |K(j)|², j ≠ 0, for the skipping bound
	y     []complex128 // scratch: the measured values, c units
	c     []complex128 // scratch: the solution, c units
	d     []complex128 // scratch: the last iterate's difference
	nz    []int32      // scratch: entries of d that still move
	ab    []float64    // scratch: their real and imaginary parts, packed
	kh    []complex128 // scratch: the kernel over the first half window (Fundamental)
	vec   bool         // the rows' dot products by the vector kernel (dotVec; dot_amd64.go)
	w     float64
	n     int
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
		e:      make([]float64, 4*m*m),
		dcIn:   make([]float64, 2*m),
		dcOut:  make([]complex128, m),
		nz:     make([]int32, 0, m),
		ab:     make([]float64, 0, 2*m),
		kh:     make([]complex128, orders[m-1]+2),
		vec:    dotVec,
	}, nil
}

// Reset sets the fundamental w = f/fs (cycles per sample) and the window
// length n in samples, and computes the kernel and the matrix of the
// equations (O(M) sines, O(M²) additions).
func (l *Leakage) Reset(w float64, n int) {
	l.w, l.n = w, n
	l.kmax = 0
	kernel(l.k[l.off:], w, n)
	for j := 1; j <= l.off; j++ {
		d := l.k[l.off+j]
		l.k[l.off-j] = cmplx.Conj(d)
		l.kmax = max(l.kmax, abs2(d))
	}
	m := len(l.orders)
	for j, h := range l.orders {
		kd := l.kern(h) // the DC entry: −2Re(v·K(h)) = −2(a·Re K − b·Im K)
		l.dcIn[2*j], l.dcIn[2*j+1] = -2*real(kd), 2*imag(kd)
	}
	for i, k := range l.orders {
		l.dcOut[i] = -l.kern(-k)
		re := l.e[4*i*m : (4*i+2)*m]
		im := l.e[(4*i+2)*m : 4*(i+1)*m]
		kk := l.k[l.off-k:]   // kk[h] = K(h − k)
		kn := l.k[:l.off-k+1] // kn[off−k−h] = K(−h − k)
		for j, h := range l.orders {
			a, b := kk[h], kn[l.off-k-h]
			// P = −(a + b), Q = −j·(a − b) = (Im(a − b), −Re(a − b))
			r, q := re[2*j:2*j+2:2*j+2], im[2*j:2*j+2:2*j+2]
			r[0], r[1] = -(real(a) + real(b)), imag(a)-imag(b)
			q[0], q[1] = -(imag(a) + imag(b)), real(b)-real(a)
		}
		// the diagonal has no K(h − k) term: only b remains
		b := kn[l.off-2*k]
		re[2*i], re[2*i+1] = -real(b), -imag(b)
		im[2*i], im[2*i+1] = -imag(b), real(b)
	}
}

// kernel fills k[j] = D(j·2π·w)/n for j = 0..len(k)−1, with D the
// Dirichlet kernel over n samples: e^{jπ·j·w(n−1)}·sin(π·j·w·n)/(n·sin(π·j·w))
// (valid for any j·w not an integer: the factors' signs cancel over a
// period), each factor the j-th power of a unit phasor taken by rotation:
// rounding grows by about 2e-16 a step, 4e-14 after 200 steps, against the
// 1e-7 tolerance. Where sin(π·j·w) is small (an order near an alias of the
// sample rate) it uses the direct formula.
func kernel(k []complex128, w float64, n int) {
	if len(k) == 0 {
		return
	}
	nf := float64(n)
	ph, un, ut := cisTurns(w*(nf-1)/2), cisTurns(w*nf/2), cisTurns(w/2)
	p, u, t := complex(1, 0), complex(1, 0), complex(1, 0)
	k[0] = 1
	for j := 1; j < len(k); j++ {
		p, u, t = p*ph, u*un, t*ut
		var d complex128
		if s := imag(t); math.Abs(s) > 1e-3 {
			f := imag(u) / (s * nf)
			d = complex(real(p)*f, imag(p)*f)
		} else {
			d = dirichlet(float64(j)*w, n)
			d = complex(real(d)/nf, imag(d)/nf)
		}
		k[j] = d
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
	// iterates' differences obey Δ⁽ᵏ⁺¹⁾ = −E(Δ⁽ᵏ⁾), Δ⁽¹⁾ = −E(y) from the
	// initial guess y and the mean. Every step leaves out the entries too
	// small to matter (see apply): late steps, where only the large
	// components still move, cost O(M) per entry that moved instead of
	// O(M²).
	dc = mean
	tol2 := leakTol * leakTol * big
	// An entry v_j moves each other by |v_j·K(h−k) + v̄_j·K(−h−k)| ≤
	// 2·|v_j|·max|K|, so entries whose magnitudes sum to at most
	// budget = tol/(20·max|K|) move none by more than a tenth of the
	// tolerance between them.
	budget := math.Sqrt(tol2) / (20 * math.Sqrt(max(l.kmax, 1e-300)))
	copy(d, c)
	ddc := l.apply(d, mean, budget)
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
		ddc = l.apply(d, ddc, budget)
	}
	for i := range x {
		x[i] = c[i] * math.Sqrt2
	}
	return dc, ok && !math.IsNaN(dc)
}

// apply replaces d by −E(d), ddc being d's DC entry, and returns the new
// DC entry. It leaves out entries (DC included) whose magnitudes sum to at
// most budget: first every entry within budget/(M+1), then, in order, any
// other that still fits what is left. When none is left out the rows are
// walked without an index.
func (l *Leakage) apply(d []complex128, ddc, budget float64) float64 {
	m := len(d)
	per := budget / float64(m+1)
	per2 := per * per
	left := budget
	if ddc*ddc <= per2 {
		left -= math.Abs(ddc)
	}
	for _, v := range d {
		if a := abs2(v); a <= per2 {
			left -= math.Sqrt(a)
		}
	}
	useDC := ddc*ddc > per2
	if useDC && ddc*ddc <= left*left {
		useDC, left = false, left-math.Abs(ddc)
	}
	nz, ab := l.nz[:0], l.ab[:0]
	for j, v := range d {
		a := abs2(v)
		if a <= per2 {
			continue
		}
		if a <= left*left {
			left -= math.Sqrt(a)
			continue
		}
		nz = append(nz, int32(j))
		ab = append(ab, real(v), imag(v))
	}
	l.nz, l.ab = nz, ab
	var ndc float64
	for t, j := range nz {
		ndc += ab[2*t]*l.dcIn[2*j] + ab[2*t+1]*l.dcIn[2*j+1]
	}
	dense := len(nz) == m
	for i := range d {
		re := l.e[4*i*m : (4*i+2)*m]
		im := l.e[(4*i+2)*m : 4*(i+1)*m]
		var sr, si float64
		if useDC {
			sr, si = ddc*real(l.dcOut[i]), ddc*imag(l.dcOut[i])
		}
		if dense {
			r, q := dot2(l.vec, ab, re, im)
			sr, si = sr+r, si+q
		} else {
			for t, j := range nz {
				a, b := ab[2*t], ab[2*t+1]
				sr += a*re[2*j] + b*re[2*j+1]
				si += a*im[2*j] + b*im[2*j+1]
			}
		}
		d[i] = complex(sr, si)
	}
	return ndc
}

// dot returns Σ x[i]·y[i] over len(x) (y at least as long), with four
// partial sums so that the additions do not wait on each other.
func dot(x, y []float64) float64 {
	y = y[:len(x)]
	var s0, s1, s2, s3 float64
	i := 0
	for ; i+4 <= len(x); i += 4 {
		s0 += x[i] * y[i]
		s1 += x[i+1] * y[i+1]
		s2 += x[i+2] * y[i+2]
		s3 += x[i+3] * y[i+3]
	}
	for ; i < len(x); i++ {
		s0 += x[i] * y[i]
	}
	return (s0 + s1) + (s2 + s3)
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
	// D over n samples is n·K (Reset's kernel); over m, m·kh
	kh := l.kh
	kernel(kh, l.w, m)
	nf, mf := complex(float64(n), 0), complex(float64(m), 0)
	full -= complex(dc, 0) * nf * l.kern(-1)
	half -= complex(dc, 0) * mf * cmplx.Conj(kh[1])
	for i, h := range l.orders {
		c := x[i] / math.Sqrt2
		if h != 1 {
			full -= c * nf * l.kern(h-1)
			half -= c * mf * kh[h-1]
		}
		full -= cmplx.Conj(c) * nf * l.kern(-h-1)
		half -= cmplx.Conj(c) * mf * cmplx.Conj(kh[h+1])
	}
	return full, half
}

func abs2(z complex128) float64 { return real(z)*real(z) + imag(z)*imag(z) }
