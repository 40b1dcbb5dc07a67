package sim

import (
	"math"
	"time"
)

// Model constants. The real-drive levels are from memory, not test values;
// see the package comment.
const (
	r5Reactor    = 0.35 // raw I5/I1 scale with a healthy 3 % reactor (→ 33 % at full load after s)
	r5None       = 0.90 // raw I5/I1 scale with no reactor effect (→ 67 % at full load after s)
	betaReactor  = 1.0  // extra roll-off (5/h)^β of the higher orders, healthy reactor
	betaNone     = 0.5  // extra roll-off with no reactor effect
	lightLoadExp = 0.35 // γ: ratios grow as load^−γ at light load (γ < 1 keeps TDD rising with load)
	minRatioLoad = 0.05 // load floor of the light-load law

	dpfNoLoad    = 0.99 // DPF at no load
	dpfLoadSlope = 0.02 // DPF falls by this much at full load (0.97)

	backgroundV5 = 0.005 // network background 5th, fraction of nominal

	maxLoad = 2.0 // SetLoad clamps to [0, maxLoad]
)

// wander holds the frequency-wander components: periods and amplitudes.
// Invented shape (common practice, no source); the amplitudes sum to 0.05 Hz.
var wander = [3]struct{ periodS, ampHz float64 }{
	{4.7 * 60, 0.025},
	{11.3 * 60, 0.015},
	{29.9 * 60, 0.010},
}

// wanderHz returns the frequency deviation at simulated time tS seconds for
// the seeded component phases ph.
func wanderHz(tS float64, ph [3]float64) float64 {
	var d float64
	for i, w := range wander {
		d += w.ampHz * math.Sin(2*math.Pi*tS/w.periodS+ph[i])
	}
	return d
}

// dailyLoad is the fraction of IL at each full hour of the day (index =
// hour), a pumping station that runs hard in the daytime. Invented, no source.
var dailyLoad = [24]float64{
	0.30, 0.28, 0.27, 0.27, 0.28, 0.35, 0.55, 0.75, 0.85, 0.88, 0.90, 0.90,
	0.85, 0.85, 0.88, 0.90, 0.88, 0.80, 0.70, 0.60, 0.50, 0.42, 0.36, 0.32,
}

// loadAtHour returns the profile's load at fractional hour-of-day hr (any
// real number; taken modulo 24), joining the hourly knots by cosine
// interpolation (continuous value and slope).
func loadAtHour(hr float64) float64 {
	hr = math.Mod(hr, 24)
	if hr < 0 {
		hr += 24
	}
	i := int(hr)
	if i > 23 { // hr rounded up to 24.0
		i = 23
	}
	u := hr - float64(i)
	w := (1 - math.Cos(math.Pi*u)) / 2
	return dailyLoad[i]*(1-w) + dailyLoad[(i+1)%24]*w
}

// secondsOfDay returns the time of day of t in its location, in seconds.
func secondsOfDay(t time.Time) float64 {
	h, m, s := t.Clock()
	return float64(h*3600+m*60+s) + float64(t.Nanosecond())/1e9
}

// conditionAt evaluates the filter profile at simulated time tS seconds.
func conditionAt(p FilterProfile, tS float64) float64 {
	if p.Period <= 0 {
		return 1
	}
	x := 2 * math.Pi * tS / p.Period.Seconds()
	return 1 - (1-p.Worst)*(1-math.Cos(x))/2
}

// harmonicRatio returns the model's Ih/I1 for a six-pulse drive at the given
// load (fraction of IL) and filter condition (0..1): zero for orders other
// than 6k ± 1 (k ≥ 1).
func harmonicRatio(h int, load, cond float64) float64 {
	if h < 5 || (h%6 != 1 && h%6 != 5) {
		return 0
	}
	r5 := r5None + cond*(r5Reactor-r5None)
	beta := betaNone + cond*(betaReactor-betaNone)
	lf := math.Max(load, minRatioLoad)
	hf := float64(h)
	a := 5 * r5 * math.Pow(5/hf, beta) * math.Pow(lf, -lightLoadExp)
	x := a / hf
	return x / math.Sqrt(1+x*x)
}

// dpfAt returns the displacement power factor at the given load.
func dpfAt(load float64) float64 { return dpfNoLoad - dpfLoadSlope*load }
