package alarm

import (
	"fmt"
	"math"
	"slices"
	"time"

	"github.com/gridloupe/gridloupe/metrics"
	"github.com/gridloupe/gridloupe/metrics/events"
	"github.com/gridloupe/gridloupe/metrics/quantity"
)

// Metric names a rule can watch. They are the record's JSON key names.
const (
	MetricRMS        = quantity.NameRMS        // channel RMS, V or A
	MetricTHD        = quantity.NameTHD        // channel THD-F, all components, %
	MetricTHDH50     = quantity.NameTHDH50     // channel THD over orders 2..50, %
	MetricTDD        = quantity.NameTDD        // current TDD, all components, % of IL
	MetricTDDH50     = quantity.NameTDDH50     // current TDD over orders 2..50, % of IL
	MetricPct        = quantity.NamePct        // one harmonic, % of the channel's fundamental
	MetricPctIL      = quantity.NamePctIL      // one current harmonic, % of IL
	MetricPF         = quantity.NamePF         // power factor of a phase or the total
	MetricDPF        = quantity.NameDPF        // displacement power factor of a phase or the total
	MetricFreq       = quantity.NameFreq       // line frequency, Hz
	MetricUnbalanceV = quantity.NameUnbalanceV // voltage unbalance, %
	MetricUnbalanceI = quantity.NameUnbalanceI // current unbalance, %
)

type metric uint8

const (
	mRMS metric = iota + 1
	mTHD
	mTHDH50
	mTDD
	mTDDH50
	mPct
	mPctIL
	mPF
	mDPF
	mFreq
	mUnbV
	mUnbI
	mQty   // any other alarm-watchable per-channel quantity of metrics/quantity's table
	mEvent // voltage events (event.go)
)

var metricNames = [...]string{mRMS: MetricRMS, mTHD: MetricTHD, mTHDH50: MetricTHDH50,
	mTDD: MetricTDD, mTDDH50: MetricTDDH50, mPct: MetricPct, mPctIL: MetricPctIL,
	mPF: MetricPF, mDPF: MetricDPF, mFreq: MetricFreq, mUnbV: MetricUnbalanceV, mUnbI: MetricUnbalanceI,
	mEvent: MetricEvent}

// Metrics lists every metric name a Rule may use, for help and error texts
// (quantity.AlarmMetrics, then MetricEvent).
func Metrics() []string { return append(quantity.AlarmMetrics(), MetricEvent) }

// parseMetric returns the metric called s and, for a per-channel scalar,
// its quantity in metrics/quantity's table.
func parseMetric(s string) (metric, quantity.ID, bool) {
	id, isQ := quantity.ChannelByName(s)
	isQ = isQ && quantity.Channel(id).Alarm
	for i, n := range metricNames {
		if i > 0 && n == s {
			return metric(i), id, true
		}
	}
	if isQ {
		return mQty, id, true
	}
	return 0, 0, false
}

// scalar reports whether m is a per-channel scalar of the quantity table.
func (m metric) scalar() bool      { return m >= mRMS && m <= mTDDH50 || m == mQty }
func (m metric) perChannel() bool  { return m >= mRMS && m <= mPctIL || m == mQty }
func (m metric) perHarmonic() bool { return m == mPct || m == mPctIL }
func (m metric) power() bool       { return m == mPF || m == mDPF }

// Target says where a rule's metric is read.
type Target struct {
	Channel int  // index in Setup.Channels for channel metrics; −1 (ignored) otherwise
	Phase   byte // pf, dpf per phase: 'a', 'b' or 'c'; 0 with Total
	Total   bool // pf, dpf of the three-phase (or single-phase) total
	// Circuit names the circuit whose phase or total a pf/dpf rule, or
	// whose phase currents an unbalance_current_pct rule, watches;
	// required for those when the setup has circuits, empty otherwise.
	Circuit string
}

// Rule is one alarm rule, as the command-line wiring builds it from the
// config file's alarms section.
type Rule struct {
	Name     string           // unique; names the alarm in messages and in the store
	Metric   string           // one of Metrics()
	Harmonic int              // pct, pct_il: the order, 2..50, computed by the setup
	Target   Target           // event rules: Channel a voltage channel, or −1 for any
	Level    metrics.Interval // only records of this level are evaluated; event rules: unused (every record's time counts)
	// Kinds: event rules only: the event kinds watched; empty = every kind.
	Kinds []events.Kind

	Above     bool    // true: raise when value > Threshold; false: raise when value < Threshold
	Threshold float64 // metric units
	// Deadband is the hysteresis in metric units, ≥ 0: a raised rule clears
	// only when value < Threshold − Deadband (Above) or value > Threshold +
	// Deadband (below rules).
	Deadband float64

	// OnDelay and OffDelay are how long, in sample time (record start +
	// duration, not wall time), the raise (clear) condition must hold
	// before the transition; 0 = on the first record that meets it. Event
	// rules: OnDelay is the minimum duration of an event that raises,
	// OffDelay how long after the last such event ended the rule clears.
	OnDelay, OffDelay time.Duration

	Severity string // free text carried into transitions (info, warning, critical)

	// MinLoad is an absolute current, A: when the mean RMS of LoadChannels
	// is below it (or null), the rule holds its state, neither raising nor
	// clearing (quiet at light load). 0 = no minimum.
	MinLoad      float64
	LoadChannels []int // current channels compared with MinLoad (the rule's channel, or the phase currents)

	Text string // human text for the alarm message

	// Baseline, when set, makes Threshold and Deadband relative to the
	// commissioning baseline the rule learns (baseline.go); the rule's
	// MinLoad still applies, and nothing is learned at light load.
	Baseline *Baseline
}

// compiled is a validated rule with its lookups resolved against the setup.
type compiled struct {
	m     metric
	ch    int         // channel index (channel metrics)
	hk    int         // index of Harmonic in Setup.Orders (pct, pct_il)
	q     quantity.ID // per-channel scalars: the quantity in metrics/quantity's table
	phase int         // index in Setup.Pairs / Record.Phases; −1 for the total
	load  []int
	delta bool       // the total of a delta record, which has no phases
	circ  int        // pf, dpf, unbalance_current_pct: index in Setup.Circuits; −1 for the bus itself
	binCh []int      // baseline rules: the currents whose fundamental picks the load bin
	ev    *eventRule // event rules: their kinds, channel and open events; nil otherwise
}

// compile validates r against s.
func compile(r *Rule, s *metrics.Setup) (compiled, error) {
	c := compiled{ch: -1, hk: -1, phase: -1, circ: -1}
	if r.Name == "" {
		return c, fmt.Errorf("rule without a name: %w", ErrRule)
	}
	m, q, ok := parseMetric(r.Metric)
	if !ok {
		return c, fmt.Errorf("rule %q: metric %q (allowed: %v): %w", r.Name, r.Metric, Metrics(), ErrMetric)
	}
	c.m, c.q = m, q
	if m == mEvent {
		return c, compileEvent(r, s, &c)
	}
	if r.Level.String() == "invalid" {
		return c, fmt.Errorf("rule %q: level %d (allowed: %v): %w", r.Name, r.Level, metrics.IntervalLabels(), ErrRule)
	}
	if !finite(r.Threshold) {
		return c, fmt.Errorf("rule %q: threshold %v: %w", r.Name, r.Threshold, ErrRule)
	}
	if !(r.Deadband >= 0) || math.IsInf(r.Deadband, 0) {
		return c, fmt.Errorf("rule %q: deadband %v must be a finite number ≥ 0: %w", r.Name, r.Deadband, ErrRule)
	}
	if r.OnDelay < 0 || r.OffDelay < 0 {
		return c, fmt.Errorf("rule %q: delays %v/%v must be ≥ 0: %w", r.Name, r.OnDelay, r.OffDelay, ErrRule)
	}
	if !(r.MinLoad >= 0) || math.IsInf(r.MinLoad, 0) {
		return c, fmt.Errorf("rule %q: min load %v must be a finite number ≥ 0: %w", r.Name, r.MinLoad, ErrRule)
	}
	if err := c.target(r, s); err != nil {
		return c, fmt.Errorf("rule %q: metric %s: %w", r.Name, r.Metric, err)
	}
	if r.MinLoad > 0 && len(r.LoadChannels) == 0 {
		return c, fmt.Errorf("rule %q: min load %v A without load channels: %w", r.Name, r.MinLoad, ErrTarget)
	}
	for _, li := range r.LoadChannels {
		if li < 0 || li >= len(s.Channels) || s.Channels[li].Kind != metrics.Current {
			return c, fmt.Errorf("rule %q: load channel %d is not a current channel: %w", r.Name, li, ErrTarget)
		}
	}
	c.load = slices.Clone(r.LoadChannels)
	if r.Baseline != nil {
		if err := c.baseline(r, s); err != nil {
			return c, fmt.Errorf("rule %q: %w", r.Name, err)
		}
	}
	return c, nil
}

// baseline validates r.Baseline and picks the currents of its load bins:
// the load channels, else the rule's current channel, else every phase
// current.
func (c *compiled) baseline(r *Rule, s *metrics.Setup) error {
	b := r.Baseline
	if b.Learn <= 0 || !(b.Base > 0) || math.IsInf(b.Base, 0) {
		return fmt.Errorf("baseline: learn %v must be positive and the load base %v A positive: %w", b.Learn, b.Base, ErrRule)
	}
	switch {
	case len(c.load) > 0:
		c.binCh = slices.Clone(c.load)
	case c.ch >= 0 && s.Channels[c.ch].Kind == metrics.Current:
		c.binCh = []int{c.ch}
	case c.circ >= 0: // the circuit's phase currents, as main channel indices
		cc := &s.Circuits[c.circ]
		for _, i := range cc.Sub.IIdx {
			if i >= 0 {
				c.binCh = append(c.binCh, cc.Map[i])
			}
		}
	default:
		for _, i := range s.IIdx {
			if i >= 0 {
				c.binCh = append(c.binCh, i)
			}
		}
	}
	if len(c.binCh) == 0 {
		return fmt.Errorf("baseline: no current channel to bin the load by: %w", ErrTarget)
	}
	return nil
}

func (c *compiled) target(r *Rule, s *metrics.Setup) error {
	m := c.m
	switch {
	case m.perChannel():
		ci := r.Target.Channel
		if ci < 0 || ci >= len(s.Channels) {
			return fmt.Errorf("channel index %d (setup has %d): %w", ci, len(s.Channels), ErrTarget)
		}
		ch := s.Channels[ci]
		var need quantity.Need
		if m.scalar() {
			need = quantity.Channel(c.q).Need
		}
		if need&quantity.Current != 0 || m == mPctIL {
			if ch.Kind != metrics.Current {
				return fmt.Errorf("channel %q is a %s; needs a current: %w", ch.Name, ch.Kind, ErrTarget)
			}
			if !(s.ILA > 0) {
				return fmt.Errorf("channel %q: needs IL (il_a) configured: %w", ch.Name, ErrTarget)
			}
		}
		if need&quantity.AllOrders != 0 && !s.AllOrders {
			return fmt.Errorf("needs all harmonic orders 2..50 (harmonics: all): %w", ErrTarget)
		}
		if m.perHarmonic() {
			k := slices.Index(s.Orders, r.Harmonic)
			if r.Harmonic < 2 || k < 0 {
				return fmt.Errorf("harmonic %d is not a computed order 2..%d (computed: %v): %w",
					r.Harmonic, metrics.MaxOrder, s.Orders, ErrTarget)
			}
			c.hk = k
		}
		c.ch = ci
	case m.power():
		var err error
		if c.circ, s, err = circuitOf(r, s); err != nil {
			return err
		}
		switch {
		case r.Target.Total && r.Target.Phase != 0:
			return fmt.Errorf("both phase %q and total: %w", r.Target.Phase, ErrTarget)
		case r.Target.Total:
			if !s.HasTotal() {
				return fmt.Errorf("total needs a phase with both a voltage and a current (delta: two or three currents): %w", ErrTarget)
			}
			c.delta = s.Wiring == metrics.Delta
		default:
			k := slices.IndexFunc(s.Pairs, func(p metrics.Pair) bool { return p.Phase == r.Target.Phase })
			if k < 0 {
				return fmt.Errorf("phase %q has no voltage and current pair: %w", r.Target.Phase, ErrTarget)
			}
			c.phase = k
		}
	case m == mUnbV || m == mUnbI:
		idx, what := s.VIdx, "voltages"
		if m == mUnbI {
			var err error
			if c.circ, s, err = circuitOf(r, s); err != nil {
				return err
			}
			idx, what = s.IIdx, "currents"
		} else if r.Target.Circuit != "" {
			return fmt.Errorf("circuit %q: the voltage unbalance is the bus's, not a circuit's: %w", r.Target.Circuit, ErrTarget)
		}
		if s.Wiring == metrics.Delta {
			if m == mUnbV {
				idx = s.LL
			}
			if n := countIdx(idx); n < 2 {
				return fmt.Errorf("needs two or three %s on delta: %w", what, ErrTarget)
			}
			break
		}
		if s.Wiring != metrics.Wye || idx[0] < 0 || idx[1] < 0 || idx[2] < 0 {
			return fmt.Errorf("needs wye wiring with three phase %s: %w", what, ErrTarget)
		}
	}
	return nil
}

// circuitOf returns the index and setup of the circuit r.Target names,
// or −1 and s itself for a setup without circuits.
func circuitOf(r *Rule, s *metrics.Setup) (int, *metrics.Setup, error) {
	switch k := s.CircuitIndex(r.Target.Circuit); {
	case r.Target.Circuit != "" && k < 0:
		return -1, nil, fmt.Errorf("no circuit %q: %w", r.Target.Circuit, ErrTarget)
	case r.Target.Circuit == "" && len(s.Circuits) > 0:
		return -1, nil, fmt.Errorf("the setup has circuits: name the circuit watched: %w", ErrTarget)
	case k >= 0:
		return k, s.Circuits[k].Sub, nil
	}
	return -1, s, nil
}

func countIdx(idx [3]int) int {
	n := 0
	for _, x := range idx {
		if x >= 0 {
			n++
		}
	}
	return n
}

func finite(x float64) bool { return !math.IsNaN(x) && !math.IsInf(x, 0) }

// value reads c's metric from r: NaN when null, absent or out of shape.
func (c *compiled) value(r *metrics.Record) float64 {
	var v float64
	switch c.m {
	case mRMS, mTHD, mTHDH50, mTDD, mTDDH50, mQty, mPct, mPctIL:
		if c.ch < 0 || c.ch >= len(r.Channels) {
			return math.NaN()
		}
		cv := &r.Channels[c.ch]
		switch {
		case c.m.scalar():
			v = *cv.Field(c.q)
		default:
			if c.hk < 0 || c.hk >= len(cv.H) {
				return math.NaN()
			}
			if c.m == mPct {
				v = cv.H[c.hk].Pct
			} else {
				v = cv.H[c.hk].PctIL
			}
		}
	case mPF, mDPF:
		if c.circ >= 0 {
			if c.circ >= len(r.Circuits) || r.Circuits[c.circ].Rec == nil {
				return math.NaN()
			}
			r = r.Circuits[c.circ].Rec
		}
		if (len(r.Phases) == 0 && !c.delta) || c.phase >= len(r.Phases) {
			return math.NaN()
		}
		switch {
		case c.phase >= 0 && c.m == mPF:
			v = r.Phases[c.phase].PF
		case c.phase >= 0:
			v = r.Phases[c.phase].DPF
		case c.m == mPF:
			v = r.Total.PF
		default:
			v = r.Total.DPF
		}
	case mFreq:
		v = r.FreqHz
	case mUnbV:
		v = r.UnbV
	case mUnbI:
		if c.circ >= 0 {
			if c.circ >= len(r.Circuits) || r.Circuits[c.circ].Rec == nil {
				return math.NaN()
			}
			r = r.Circuits[c.circ].Rec
		}
		v = r.UnbI
	default:
		return math.NaN()
	}
	if !finite(v) {
		return math.NaN()
	}
	return v
}

// loadA returns the mean RMS of the load channels in r, A; NaN when any is
// null or absent.
func (c *compiled) loadA(r *metrics.Record) float64 {
	sum := 0.0
	for _, li := range c.load {
		if li >= len(r.Channels) || !finite(r.Channels[li].RMS) {
			return math.NaN()
		}
		sum += r.Channels[li].RMS
	}
	return sum / float64(len(c.load))
}
