package wiringcheck

import (
	"fmt"
	"math"
	"math/cmplx"
	"slices"

	"github.com/gridloupe/gridloupe/metrics"
)

// Finding kinds (DESIGN "Wiring check"), plus LowLoad: too little current
// to judge the CTs.
const (
	Rotation    = "rotation"
	ReversedCT  = "reversed_ct"
	SwappedCT   = "swapped_ct"
	MisplacedCT = "misplaced_ct"
	Missing     = "missing"
	OffNominal  = "off_nominal"
	Angle       = "angle"
	LowLoad     = "low_load"
	NoAngles    = "no_angles" // no voltage angle to judge the currents by (reference dead or unlocked)
)

// Verdicts.
const (
	VerdictOK    = "ok"
	VerdictCheck = "check"
)

// Thresholds of the judgement (common practice, no source, except where
// DESIGN fixes them).
const (
	// offNominalFrac: DESIGN "Wiring check": a voltage outside ±10 % of
	// the declared value.
	offNominalFrac = 0.10
	// deadVFrac: a voltage under 10 % of the declared value is dead (a
	// blown fuse or an open lead), not merely low.
	deadVFrac = 0.10
	// deadIFrac: a current under 2 % of the largest current, while that
	// one carries load, is dead (an open or shorted CT circuit).
	deadIFrac = 0.02
	// maxAngleDeg: DESIGN: a current more than 60° from its voltage.
	maxAngleDeg = 60
	// DefaultLoadFrac: below 5 % of IL (or of the base current) the CTs
	// are not judged.
	DefaultLoadFrac = 0.05
)

// Weights of the search, in squared degrees: spread of the displacement
// angles around their mean, a penalty beyond ±60°, a pull toward a lagging
// drive load (15°), and the price of each departure from the configured
// hook-up: a reversed CT, a CT on another phase (a swapped pair counts
// once), a second CT on one phase.
// Tuned (no source) so that a correct hook-up reads ok from 40° leading to
// 60° lagging, a lone current 85° off its voltage reads as an angle, and
// one or more reversed CTs, a swapped pair or a misplaced CT is named as
// such. Some miswirings cannot be told apart by angles at all: all three
// CTs moved one phase round under a 25° lagging load look exactly like all
// three reversed under a 35° leading one; the pull toward a lagging load
// then names the reversal.
const (
	wSpread   = 1.0
	wRange    = 0.3
	wPull     = 0.05
	pullDeg   = 15.0
	costRev   = 1000.0
	costPhase = 2000.0 // a swap of two CTs is one mistake: charged once for the pair
	costShare = 1000.0
)

// Options are the declared values the snapshot is judged against.
type Options struct {
	NominalV float64 // declared voltage (delta: line-to-line), V; > 0
	// LoadA is the current below which the CTs are not judged: the
	// largest current must reach it. 0 = 1 A.
	LoadA float64
}

// Finding is one thing to fix.
type Finding struct {
	Kind   string   `json:"kind"`
	Phases []string `json:"phases"`
	Text   string   `json:"text"`
}

// Report is the check's result: verdict ok when there is no finding.
type Report struct {
	Verdict  string    `json:"verdict"`
	Rotation string    `json:"rotation,omitempty"` // abc or acb; empty when it cannot be told
	Findings []Finding `json:"findings"`
}

// phasor of a channel's fundamental from a record, relative to the
// reference; ok is false when its angle is null.
func fund(r *metrics.Record, ci int) (complex128, bool) {
	if ci < 0 || ci >= len(r.Channels) || len(r.Channels[ci].H) == 0 {
		return 0, false
	}
	h := r.Channels[ci].H[0]
	if metrics.IsNull(h.RMS) || metrics.IsNull(h.PhaseDeg) {
		return 0, false
	}
	return cmplx.Rect(h.RMS, h.PhaseDeg*math.Pi/180), true
}

func rms(r *metrics.Record, ci int) float64 {
	if ci < 0 || ci >= len(r.Channels) {
		return math.NaN()
	}
	return r.Channels[ci].RMS
}

var phaseName = [3]string{"a", "b", "c"}

// checker carries one Check call.
type checker struct {
	s   *metrics.Setup
	r   *metrics.Record
	o   Options
	out []Finding
	// prefix names the circuit being judged, with circuits
	prefix string
	// phase voltages (delta: to the artificial neutral) usable for angles
	v   [3]complex128
	vOK [3]bool
}

func (c *checker) add(kind string, text string, phases ...string) {
	slices.Sort(phases)
	c.out = append(c.out, Finding{Kind: kind, Phases: slices.Compact(phases), Text: c.prefix + text})
}

// Check judges record r (an aggregate of a few seconds, made with s).
func Check(s *metrics.Setup, r *metrics.Record, o Options) Report {
	c := &checker{s: s, r: r, o: o}
	if c.o.LoadA <= 0 {
		c.o.LoadA = 1
	}
	rot := c.voltages()
	if !c.vOK[0] && !c.vOK[1] && !c.vOK[2] && hasCurrent(s) && !c.has(Missing) {
		ref := s.Channels[s.Reference].Name
		c.add(NoAngles, fmt.Sprintf("no voltage angle could be measured (the reference %s gave no frequency lock, or too few voltages are connected): the CTs cannot be judged. Check the reference voltage and lock_min_pct, then run the check again", ref))
	}
	if len(s.Circuits) == 0 {
		c.currents(nil)
	}
	for _, ci := range s.Circuits {
		c.prefix = "circuit " + ci.Name + ": "
		c.currents(ci.Currents)
	}
	c.prefix = ""
	rep := Report{Verdict: VerdictOK, Rotation: rot, Findings: c.out}
	if len(c.out) > 0 {
		rep.Verdict = VerdictCheck
	}
	if rep.Findings == nil {
		rep.Findings = []Finding{}
	}
	return rep
}

func hasCurrent(s *metrics.Setup) bool {
	for _, ch := range s.Channels {
		if ch.Kind == metrics.Current {
			return true
		}
	}
	return false
}

func (c *checker) has(kind string) bool {
	for _, f := range c.out {
		if f.Kind == kind {
			return true
		}
	}
	return false
}

// voltages checks every voltage channel for dead or off-nominal readings,
// builds the phase voltage phasors and returns the rotation.
func (c *checker) voltages() string {
	s, r := c.s, c.r
	nom := c.o.NominalV
	dead := map[int]bool{}
	for ci, ch := range s.Channels {
		if ch.Kind != metrics.Voltage {
			continue
		}
		x := rms(r, ci)
		what := "phase " + string(ch.Phase)
		if ch.To != 0 {
			what = "line " + string([]byte{ch.Phase, ch.To})
		}
		phases := []string{string(ch.Phase)}
		if ch.To != 0 {
			phases = append(phases, string(ch.To))
		}
		switch {
		case metrics.IsNull(x) || x < deadVFrac*nom:
			dead[ci] = true
			c.add(Missing, fmt.Sprintf("voltage %s (%s) reads %s, next to nothing against the declared %g V: check its fuse, its lead and the input connector, and that the channel order in the config matches the wiring",
				ch.Name, what, volts(x), nom), phases...)
		case math.Abs(x/nom-1) > offNominalFrac:
			dir := "above"
			if x < nom {
				dir = "below"
			}
			c.add(OffNominal, fmt.Sprintf("voltage %s (%s) reads %.1f V, %.1f %% %s the declared %g V (more than ±10 %%): check the channel's scale (the VT or divider ratio) and nominal.voltage_v; a phase-to-neutral channel reads about 58 %% of a line-to-line value",
				ch.Name, what, x, 100*math.Abs(x/nom-1), dir, nom), phases...)
		}
	}
	switch s.Wiring {
	case metrics.Wye, metrics.SinglePhase:
		for p := range 3 {
			ci := s.VIdx[p]
			if ci >= 0 && !dead[ci] {
				c.v[p], c.vOK[p] = fund(r, ci)
			}
		}
	case metrics.Delta:
		var ll [3]complex128
		var ok [3]bool
		for l := range 3 {
			ci := s.LL[l]
			if ci >= 0 && !dead[ci] {
				ll[l], ok[l] = fund(r, ci)
				if s.LLNeg[l] {
					ll[l] = -ll[l]
				}
			}
		}
		for l := range 3 {
			if !ok[l] && ok[(l+1)%3] && ok[(l+2)%3] {
				ll[l], ok[l] = -(ll[(l+1)%3] + ll[(l+2)%3]), true
			}
		}
		if ok[0] && ok[1] && ok[2] {
			for p := range 3 {
				// v_a − (v_a + v_b + v_c)/3 = (v_ab − v_ca)/3
				c.v[p], c.vOK[p] = (ll[p]-ll[(p+2)%3])/3, true
			}
		}
	}
	if !c.vOK[0] || !c.vOK[1] || !c.vOK[2] {
		return ""
	}
	a := complex(-0.5, math.Sqrt(3)/2)
	pos := cmplx.Abs(c.v[0] + a*c.v[1] + a*a*c.v[2])
	neg := cmplx.Abs(c.v[0] + a*a*c.v[1] + a*c.v[2])
	if neg > pos {
		c.add(Rotation, "the voltages run a-c-b instead of a-b-c: two voltage leads are swapped at the inputs (or the supply's rotation is reversed). If the motors turn the right way, swap two voltage leads, for example b and c, so that each input's label matches its conductor, then run this check again",
			"a", "b", "c")
		return "acb"
	}
	return "abc"
}

func volts(x float64) string {
	if metrics.IsNull(x) {
		return "nothing (null)"
	}
	return fmt.Sprintf("%.1f V", x)
}

// cand is one explanation of one current: it belongs to phase q's voltage,
// reversed or not.
type cand struct {
	q   int
	rev bool
}

type current struct {
	ci  int
	p   int // configured phase
	ph  complex128
	amp float64
}

// currents checks the current channels: load, dead channels, then the best
// explanation of their angles.
func (c *checker) currents(only []int) {
	s, r := c.s, c.r
	var cur []current
	imax := 0.0
	for ci, ch := range s.Channels {
		if ch.Kind != metrics.Current || ch.Phase == 'n' || (only != nil && !slices.Contains(only, ci)) {
			continue
		}
		x := rms(r, ci)
		if !metrics.IsNull(x) {
			imax = max(imax, x)
		}
		cur = append(cur, current{ci: ci, p: int(ch.Phase - 'a'), amp: x})
	}
	if len(cur) == 0 {
		return
	}
	if imax < c.o.LoadA {
		c.add(LowLoad, fmt.Sprintf("the largest current reads %.2f A, under %.3g A: too little load to judge the CTs' polarity and placement. Run the check again with the drives running (the voltages above are judged)",
			imax, c.o.LoadA))
		return
	}
	var live []current
	for _, x := range cur {
		ch := s.Channels[x.ci]
		if metrics.IsNull(x.amp) || x.amp < deadIFrac*imax {
			c.add(Missing, fmt.Sprintf("current %s (phase %c) reads %s while another current carries %.1f A: check the CT's leads and connector, and whether its shorting link is still closed (open it only with the CT wired to the input; never open-circuit a loaded CT)",
				ch.Name, ch.Phase, amps(x.amp), imax), string(ch.Phase))
			continue
		}
		ph, ok := fund(r, x.ci)
		if !ok || !c.vOK[x.p] {
			continue // no angle, or no voltage of its own phase to judge it by
		}
		x.ph = ph
		live = append(live, x)
	}
	if len(live) == 0 {
		return
	}
	best := c.search(live)
	c.explain(live, best)
}

func amps(x float64) string {
	if metrics.IsNull(x) {
		return "nothing (null)"
	}
	return fmt.Sprintf("%.2f A", x)
}

// disp returns the displacement angle (degrees, + lagging) of current x
// under explanation k: the angle of phase q's voltage less the current's,
// a reversed current turned back by 180°.
func (c *checker) disp(x current, k cand) float64 {
	d := cmplx.Phase(c.v[k.q]) - cmplx.Phase(x.ph)
	if k.rev {
		d += math.Pi
	}
	return wrap(d * 180 / math.Pi)
}

func wrap(deg float64) float64 {
	d := math.Remainder(deg, 360)
	if d <= -180 {
		d += 360
	}
	return d
}

// search tries every explanation of every current and returns the one of
// least cost.
func (c *checker) search(live []current) []cand {
	var cands []cand
	for q := range 3 {
		if c.vOK[q] {
			cands = append(cands, cand{q, false}, cand{q, true})
		}
	}
	cur := make([]cand, len(live))
	best := make([]cand, len(live))
	bestCost := math.Inf(1)
	var walk func(k int)
	walk = func(k int) {
		if k == len(live) {
			if x := c.cost(live, cur); x < bestCost {
				bestCost = x
				copy(best, cur)
			}
			return
		}
		for _, h := range cands {
			cur[k] = h
			walk(k + 1)
		}
	}
	walk(0)
	return best
}

func (c *checker) cost(live []current, h []cand) float64 {
	var sum complex128
	d := make([]float64, len(live))
	for k, x := range live {
		d[k] = c.disp(x, h[k])
		sum += cmplx.Rect(x.amp, d[k]*math.Pi/180)
	}
	mean := cmplx.Phase(sum) * 180 / math.Pi
	var cost float64
	used := [3]int{}
	for k, x := range live {
		e := wrap(d[k] - mean)
		cost += wSpread * e * e
		if o := math.Abs(d[k]) - maxAngleDeg; o > 0 {
			cost += wRange * o * o
		}
		pl := d[k] - pullDeg
		cost += wPull * pl * pl
		if h[k].q != x.p {
			cost += costPhase
		}
		if h[k].rev {
			cost += costRev
		}
		used[h[k].q]++
	}
	for _, n := range used {
		if n > 1 {
			cost += costShare * float64(n-1)
		}
	}
	for k, x := range live {
		for j := k + 1; j < len(live); j++ {
			if y := live[j]; h[k].q == y.p && h[j].q == x.p && x.p != y.p {
				cost -= costPhase // a swapped pair
			}
		}
	}
	return cost
}

// explain turns the chosen explanation into findings.
func (c *checker) explain(live []current, h []cand) {
	s := c.s
	delta := s.Wiring == metrics.Delta
	pOf := func(p int) string {
		if delta {
			return "the two-wattmeter total P and Q read wrong"
		}
		return "P of phase " + phaseName[p] + " reads wrong"
	}
	done := map[int]bool{}
	for k, x := range live {
		name := s.Channels[x.ci].Name
		p, q := x.p, h[k].q
		switch {
		case q == p && h[k].rev:
			tail := "P of phase " + phaseName[p] + " reads negative"
			if delta {
				tail = "the two-wattmeter total P reads far too low"
			}
			c.add(ReversedCT, fmt.Sprintf("the current on phase %s (%s) flows opposite to its voltage: the CT is reversed or its leads are swapped; %s. With the CT secondary shorted, swap its two leads at the input (or turn the CT so its arrow points to the load)",
				phaseName[p], name, tail), phaseName[p])
		case q != p:
			if done[k] {
				continue
			}
			// a current on q that in turn belongs to p makes a swap
			mate := -1
			for j, y := range live {
				if j != k && y.p == q && h[j].q == p {
					mate = j
				}
			}
			rev := ""
			if h[k].rev {
				rev = " and reversed"
			}
			if mate >= 0 {
				done[mate] = true
				other := s.Channels[live[mate].ci].Name
				if h[mate].rev {
					rev = " and reversed"
				}
				c.add(SwappedCT, fmt.Sprintf("the currents on phases %s (%s) and %s (%s) belong to each other's phases%s: the two CTs, or their leads at the inputs, are swapped; P and PF of both read wrong. With both CT secondaries shorted, swap the leads of %s and %s",
					phaseName[p], name, phaseName[q], other, rev, name, other), phaseName[p], phaseName[q])
				continue
			}
			c.add(MisplacedCT, fmt.Sprintf("the current wired as phase %s (%s) follows the voltage of phase %s%s: its CT sits on the phase %s conductor, or its leads go to the wrong input; %s. Move the CT (secondary shorted) to the phase %s conductor",
				phaseName[p], name, phaseName[q], rev, phaseName[q], pOf(p), phaseName[p]), phaseName[p], phaseName[q])
		}
		if d := c.disp(x, h[k]); q == p && !h[k].rev && math.Abs(d) > maxAngleDeg {
			c.add(Angle, fmt.Sprintf("the current on phase %s (%s) is %.0f° from its voltage (displacement power factor %.2f), more than 60°: check that the CT belongs to this circuit and phase; a motor running nearly unloaded or a capacitor bank can also do this",
				phaseName[p], name, d, math.Cos(d*math.Pi/180)), phaseName[p])
		}
	}
}
