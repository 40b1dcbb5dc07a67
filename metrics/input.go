package metrics

// Setup is fixed for a run: what is measured and how it is wired. Build it
// with NewSetup, which validates it and derives the phase pairs.
type Setup struct {
	Channels  []Channel
	Orders    []int // computed orders, ascending, Orders[0] == 1
	AllOrders bool  // Orders holds every order 1..50, so h50 values exist
	Wiring    Wiring
	NominalV  float64 // declared voltage (phase-to-neutral; line-to-line for Delta), V
	NominalI  float64 // nominal current, A; 0 = unset
	ILA       float64 // maximum demand load current, A; 0 = unset (no TDD, no pct_il)
	Reference int     // index in Channels of the angle reference (a voltage)
	// Circuits, when set, own every current channel: each is measured
	// against the shared bus voltages and reported under its name; the
	// bus itself then has no phases or totals. NewSetup derives each
	// circuit's Sub, Map and ProdOff.
	Circuits []Circuit

	// Derived by NewSetup.
	Pairs   []Pair // phases with both a voltage and a current, in a, b, c order
	Neutral int    // index of the neutral current channel, −1 when none
	VIdx    [3]int // voltage channel of phase a, b, c; −1 when none
	IIdx    [3]int // current channel of phase a, b, c; −1 when none

	// Products are the (voltage, current) channel products the pipeline
	// sums over each window into Input.SumVI: Pairs for single-phase and
	// wye, the two-wattmeter elements for Delta.
	Products []Pair
	// LL is, for Delta, the voltage channel of line ab, bc and ca (−1 when
	// not measured); LLNeg marks a channel wired the other way round (ba,
	// cb, ac), whose samples are the negative of the line's.
	LL    [3]int
	LLNeg [3]bool

	valid bool // set by NewSetup; Compute fills only nulls without it
}

// Pair is one phase's voltage and current channel indices.
type Pair struct {
	Phase byte
	V, I  int
	// Neg marks a Delta wattmeter element whose voltage channel measures
	// the reverse of the element's voltage: its Σv·i enters P negated.
	Neg bool
}

// ChannelSums is what the pipeline accumulates for one channel over one
// synchronized window. Values are in engineering units (calibrated).
type ChannelSums struct {
	N       int          // samples in the window
	Sum     float64      // Σx
	SumSq   float64      // Σx²
	Peak    float64      // max |x| (for crest_factor)
	Phasors []complex128 // RMS phasors per Setup.Orders, angle at the window's first sample, before delay correction and referencing
	Clipped bool         // |x| reached FullScale
	Bad     bool         // a NaN or Inf sample was seen
}

// Input is one window's accumulated sums, handed to Compute.
type Input struct {
	Ch      []ChannelSums // per Setup.Channels
	SumVI   []float64     // per Setup.Products: Σ v·i over the window (raw samples)
	FreqHz  float64       // tracked fundamental frequency of the window; NaN without lock
	OmegaHz float64       // frequency used for delay correction (FreqHz, or nominal without lock)
	Lock    bool
}
