package metrics

import (
	"math"
	"time"
)

// Null returns the marker stored in a float64 field whose quantity is
// undefined for the interval (fundamental below the near-zero floor, S near
// zero, no lock, bad samples): a quiet NaN. Encoders print it as JSON null;
// values handed to encoders are never NaN or Inf otherwise. Test with IsNull.
func Null() float64 { return math.NaN() }

// IsNull reports whether v is the undefined marker (any NaN).
func IsNull(v float64) bool { return v != v }

// Kind is what a channel measures.
type Kind uint8

// Channel kinds.
const (
	Voltage Kind = iota + 1
	Current
)

// String returns the config spelling of k.
func (k Kind) String() string {
	switch k {
	case Voltage:
		return "voltage"
	case Current:
		return "current"
	}
	return "unknown"
}

// Wiring is the system's connection.
type Wiring uint8

// Wirings.
const (
	SinglePhase Wiring = iota + 1
	Wye
	Delta // three-wire: line-to-line voltages, two or three currents
)

// Channel describes one measured channel as the computations need it.
type Channel struct {
	Name      string
	Kind      Kind
	Phase     byte    // 'a', 'b', 'c' or 'n' (neutral current); a line-to-line voltage's first phase
	To        byte    // Delta voltages: the second phase ('b' for a channel measuring v_ab); 0 otherwise
	FullScale float64 // engineering units; 0 = none (no clipping check)
	DelayS    float64 // time by which the channel's sample lags the frame instant, seconds (positive: sampled late; a sensor lagging by τ is −τ); order h is rotated by −h·ω·DelayS
	ILA       float64 // currents: this channel's IL (its circuit's), the base of TDD and pct_il; 0 = Setup.ILA
}

// Interval is an aggregation level. Its labels form a closed set.
type Interval uint8

// Aggregation levels.
const (
	Int200ms Interval = iota + 1
	Int3s
	Int10min
	Int2h
)

var intervalLabels = [...]string{Int200ms: "200ms", Int3s: "3s", Int10min: "10min", Int2h: "2h"}

// String returns the interval's label: 200ms, 3s, 10min or 2h.
func (iv Interval) String() string {
	if int(iv) < len(intervalLabels) && iv > 0 {
		return intervalLabels[iv]
	}
	return "invalid"
}

// ParseInterval parses one of the labels 200ms, 3s, 10min, 2h.
func ParseInterval(s string) (Interval, bool) {
	for i, l := range intervalLabels {
		if i > 0 && l == s {
			return Interval(i), true
		}
	}
	return 0, false
}

// IntervalLabels lists the valid labels in order, for help and error texts.
func IntervalLabels() []string { return []string{"200ms", "3s", "10min", "2h"} }

// Flags is a set of record flags from DESIGN's closed set.
type Flags uint16

// Record flags.
const (
	FlagEvent Flags = 1 << iota
	FlagNoLock
	FlagPartial
	FlagGap
	FlagClipped
	FlagBadSample
	FlagUndefined
	FlagInComputed
	FlagRotationACB
	FlagClockUnsynced
)

var flagNames = [...]string{"event", "no_lock", "partial", "gap", "clipped", "bad_sample",
	"undefined", "in_computed", "rotation_acb", "clock_unsynced"}

// Names returns the set flags' names in a fixed order.
func (f Flags) Names() []string {
	out := make([]string, 0, 4)
	for i, n := range flagNames {
		if f&(1<<i) != 0 {
			out = append(out, n)
		}
	}
	return out
}

// AppendNames appends the set flags' names to dst without other allocation.
func (f Flags) AppendNames(dst []string) []string {
	for i, n := range flagNames {
		if f&(1<<i) != 0 {
			dst = append(dst, n)
		}
	}
	return dst
}

// FlagNames lists every flag name, in bit order.
func FlagNames() []string { return append([]string(nil), flagNames[:]...) }

// Harmonic is one order's values on one channel.
type Harmonic struct {
	H        int
	RMS      float64 // RMS magnitude, engineering units
	Pct      float64 // percent of the channel's own fundamental
	PctIL    float64 // percent of IL (currents with IL configured); NaN otherwise
	PhaseDeg float64 // relative to the reference fundamental, (−180, 180]; NaN when undefined
}

// ChannelValues holds one channel's values for an interval.
type ChannelValues struct {
	RMS       float64
	DC        float64
	THDPct    float64 // THD-F over everything but DC and fundamental
	THDH50Pct float64 // orders 2..50; NaN when not all orders are computed
	TDDPct    float64 // currents with IL; NaN otherwise
	TDDH50Pct float64
	// CrestFactor is the window's peak |x| over its RMS (intervals keep
	// the largest); null below the channel's near-zero floor.
	CrestFactor float64
	H           []Harmonic // Setup.Orders, fundamental first
}

// PhaseValues holds one phase's powers (a phase with both a voltage and a current).
type PhaseValues struct {
	Phase byte
	P     float64 // p_w: mean of v·i
	P1    float64 // p1_w
	Q1    float64 // q_var: signed fundamental reactive power, + for inductive
	S     float64 // s_va = V·I
	S1    float64 // s1_va = V1·I1
	SN    float64 // sn_va
	DI    float64 // di_var = V1·IH
	DV    float64 // dv_var = VH·I1
	SH    float64 // sh_va = VH·IH
	PF    float64 // P/S with the sign of P
	DPF   float64 // cos(θv1 − θi1) with the sign of P1
}

// TotalValues holds three-phase (or single-phase) totals.
type TotalValues struct {
	P   float64 // p_w
	Q1  float64 // q_var
	S   float64 // s_va: arithmetic sum of phase S
	Se  float64 // se_va: IEEE 1459 effective apparent power
	Se1 float64 // se1_va
	Ve  float64 // ve_v
	Ie  float64 // ie_a
	PF  float64 // P/Se
	DPF float64 // P1+/S1+

	// Added for aggregation (DESIGN: total dpf from the aggregated
	// fundamental powers): positive-sequence fundamental active and
	// reactive power, P1⁺ = 3·Re(V1⁺·I1⁺*), Q1⁺ = 3·Im(V1⁺·I1⁺*). Null
	// unless the wiring is wye with three phase pairs. Not in the JSON
	// contract; a store that keeps them gives exact 2 h total dpf.
	P1Pos float64
	Q1Pos float64
}

// Seq holds the symmetrical components of one order on three phases.
type Seq struct {
	H    int
	Pos  float64
	Neg  float64
	Zero float64
}

// Dominant returns "pos", "neg" or "zero", the largest component.
func (s Seq) Dominant() string {
	switch {
	case s.Pos >= s.Neg && s.Pos >= s.Zero:
		return "pos"
	case s.Neg >= s.Zero:
		return "neg"
	}
	return "zero"
}

// Record is one interval's result in the interface contract's schema. Slices
// are sized once by NewRecord and reused; a Record is not safe for
// concurrent use.
type Record struct {
	Interval   Interval
	Start      time.Time // wall time of the first sample
	DurationS  float64
	Samples    uint64
	FreqHz     float64 // NaN without lock
	Freq10sHz  float64 // valid when HasFreq10s
	HasFreq10s bool
	Flags      Flags
	Channels   []ChannelValues // in Setup.Channels order
	Phases     []PhaseValues   // phases having both V and I, in a, b, c order
	Total      TotalValues     // valid when len(Phases) > 0
	SeqV       []Seq           // per Setup.Orders; empty unless wye with three voltages
	SeqI       []Seq           // per Setup.Orders; empty unless wye with three currents
	UnbV       float64         // voltage_pct, NaN when undefined
	UnbI       float64         // current_pct
	Circuits   []CircuitValues // per Setup.Circuits; empty without circuits

	cin []Input // per circuit: scratch input for Compute
}

// Clone returns a deep copy of r, for handing a record to another
// goroutine or keeping it past the producer's next window.
func (r *Record) Clone() *Record {
	c := &Record{}
	r.CopyTo(c)
	return c
}

// CopyTo makes dst a deep copy of r, reusing dst's slices where their
// lengths match (a dst from NewRecord with the same Setup), so that a
// record can be handed to another goroutine without allocating. dst's own
// scratch is kept.
func (r *Record) CopyTo(dst *Record) {
	cin := dst.cin
	chans, phases, seqV, seqI, circuits := dst.Channels, dst.Phases, dst.SeqV, dst.SeqI, dst.Circuits
	*dst = *r
	dst.cin = cin
	if len(chans) != len(r.Channels) {
		chans = make([]ChannelValues, len(r.Channels))
	}
	for i := range r.Channels {
		h := chans[i].H
		chans[i] = r.Channels[i]
		chans[i].H = copyInto(h, r.Channels[i].H)
	}
	dst.Channels = chans
	dst.Phases = copyInto(phases, r.Phases)
	dst.SeqV = copyInto(seqV, r.SeqV)
	dst.SeqI = copyInto(seqI, r.SeqI)
	if r.Circuits == nil {
		dst.Circuits = nil
		return
	}
	if len(circuits) != len(r.Circuits) {
		circuits = make([]CircuitValues, len(r.Circuits))
	}
	for k, cv := range r.Circuits {
		circuits[k].Name = cv.Name
		if cv.Rec == nil {
			circuits[k].Rec = nil
			continue
		}
		if circuits[k].Rec == nil {
			circuits[k].Rec = &Record{}
		}
		cv.Rec.CopyTo(circuits[k].Rec)
	}
	dst.Circuits = circuits
}

// copyInto returns src's elements in dst's storage when the lengths match,
// else in a new slice (nil stays nil, empty stays empty).
func copyInto[T any](dst, src []T) []T {
	if src == nil {
		return nil
	}
	if dst == nil || len(dst) != len(src) {
		dst = make([]T, len(src))
	}
	copy(dst, src)
	return dst
}
