package metrics

import (
	"fmt"
	"math"

	"github.com/gridloupe/gridloupe/metrics/limits"
)

// MaxOrder is the highest harmonic order computed: the highest IEEE 519
// assesses (limits.MaxOrder, defined there once; IEC 61000-4-7 also stops
// at the 50th).
const MaxOrder = limits.MaxOrder

// NewSetup validates s and returns a copy with the derived fields filled:
// Pairs, Neutral, VIdx, IIdx and AllOrders (true when Orders is exactly
// 1..MaxOrder; the caller's AllOrders is ignored). A Reference of −1 selects
// the first voltage channel. The returned Setup is read-only afterwards and
// may be shared by goroutines.
//
// Rules: at least one channel; kinds Voltage or Current; phases 'a', 'b',
// 'c', or 'n' for a neutral current; single-phase wiring uses phase 'a'
// (and optionally a neutral current); at most one voltage and one current
// per phase; FullScale ≥ 0 and DelayS finite; Orders ascending, Orders[0] ==
// 1, all ≤ MaxOrder; Reference a voltage channel; nominal values ≥ 0.
func NewSetup(s Setup) (*Setup, error) {
	if len(s.Channels) == 0 {
		return nil, ErrNoChannels
	}
	if s.Wiring != SinglePhase && s.Wiring != Wye && s.Wiring != Delta {
		return nil, fmt.Errorf("wiring %d: %w", s.Wiring, ErrWiring)
	}
	for _, v := range [...]struct {
		name string
		x    float64
	}{{"nominal voltage", s.NominalV}, {"nominal current", s.NominalI}, {"IL", s.ILA}} {
		if !(v.x >= 0) || math.IsInf(v.x, 0) {
			return nil, fmt.Errorf("%s %v: %w", v.name, v.x, ErrNominal)
		}
	}
	out := s
	out.Channels = append([]Channel(nil), s.Channels...)
	out.Circuits = append([]Circuit(nil), s.Circuits...)
	out.Orders = append([]int(nil), s.Orders...)
	out.Neutral = -1
	out.VIdx = [3]int{-1, -1, -1}
	out.IIdx = [3]int{-1, -1, -1}
	out.Pairs = nil
	out.Products = nil
	out.LL = [3]int{-1, -1, -1}
	out.LLNeg = [3]bool{}
	for i := range out.Channels {
		if err := out.addChannel(i); err != nil {
			return nil, err
		}
	}
	if err := checkOrders(out.Orders); err != nil {
		return nil, err
	}
	out.AllOrders = len(out.Orders) == MaxOrder // ascending from 1, ≤ MaxOrder: exactly 1..50
	if out.Reference == -1 {
		for i, c := range out.Channels {
			if c.Kind == Voltage {
				out.Reference = i
				break
			}
		}
	}
	if out.Reference < 0 || out.Reference >= len(out.Channels) || out.Channels[out.Reference].Kind != Voltage {
		return nil, fmt.Errorf("reference %d: %w", s.Reference, ErrReference)
	}
	if len(out.Circuits) > 0 {
		if err := out.deriveCircuits(); err != nil {
			return nil, err
		}
		out.valid = true
		return &out, nil
	}
	if out.Wiring == Delta {
		if err := out.deltaElements(); err != nil {
			return nil, err
		}
		out.valid = true
		return &out, nil
	}
	for p := range 3 {
		if out.VIdx[p] >= 0 && out.IIdx[p] >= 0 {
			out.Pairs = append(out.Pairs, Pair{Phase: byte('a' + p), V: out.VIdx[p], I: out.IIdx[p]})
		}
	}
	out.Products = out.Pairs
	out.valid = true
	return &out, nil
}

func (s *Setup) addChannel(i int) error {
	c := &s.Channels[i]
	if c.Kind != Voltage && c.Kind != Current {
		return fmt.Errorf("channel %d %q: kind %d: %w", i, c.Name, c.Kind, ErrChannel)
	}
	if !(c.FullScale >= 0) || math.IsInf(c.FullScale, 0) {
		return fmt.Errorf("channel %d %q: full scale %v: %w", i, c.Name, c.FullScale, ErrChannel)
	}
	if math.IsNaN(c.DelayS) || math.IsInf(c.DelayS, 0) {
		return fmt.Errorf("channel %d %q: delay %v: %w", i, c.Name, c.DelayS, ErrChannel)
	}
	if len(s.Circuits) > 0 && c.Kind == Current {
		return nil // each circuit's own setup checks its currents
	}
	if s.Wiring == Delta {
		return s.addDeltaChannel(i)
	}
	if c.To != 0 {
		return fmt.Errorf("channel %d %q: line-to-line voltage %c%c needs delta wiring: %w", i, c.Name, c.Phase, c.To, ErrChannel)
	}
	switch {
	case c.Phase == 'n' && c.Kind == Current:
		if s.Neutral >= 0 {
			return fmt.Errorf("channel %d %q: phase n: %w", i, c.Name, ErrDuplicate)
		}
		s.Neutral = i
		return nil
	case c.Phase == 'a', s.Wiring == Wye && (c.Phase == 'b' || c.Phase == 'c'):
	default:
		return fmt.Errorf("channel %d %q: phase %q not allowed for %s %s wiring: %w",
			i, c.Name, c.Phase, c.Kind, wiringName(s.Wiring), ErrChannel)
	}
	idx := &s.VIdx
	if c.Kind == Current {
		idx = &s.IIdx
	}
	p := int(c.Phase - 'a')
	if idx[p] >= 0 {
		return fmt.Errorf("channel %d %q: %s on phase %c: %w", i, c.Name, c.Kind, c.Phase, ErrDuplicate)
	}
	idx[p] = i
	return nil
}

func wiringName(w Wiring) string {
	switch w {
	case Wye:
		return "wye"
	case Delta:
		return "delta"
	}
	return "single-phase"
}

func checkOrders(o []int) error {
	if len(o) == 0 || o[0] != 1 {
		return fmt.Errorf("orders %v: the fundamental (1) must come first: %w", o, ErrOrders)
	}
	for k := 1; k < len(o); k++ {
		if o[k] <= o[k-1] || o[k] > MaxOrder {
			return fmt.Errorf("orders %v: must ascend within 1..%d: %w", o, MaxOrder, ErrOrders)
		}
	}
	return nil
}

// floor returns channel ci's near-zero floor (DESIGN "Conventions of
// measurement"): 0.5 % of FullScale; without one, of NominalV (voltages) or
// NominalI, else ILA (currents); with none, 1e-6 engineering units.
func (s *Setup) floor(ci int) float64 {
	const frac = 0.005
	c := &s.Channels[ci]
	switch {
	case c.FullScale > 0:
		return frac * c.FullScale
	case c.Kind == Voltage && s.NominalV > 0:
		return frac * s.NominalV
	case c.Kind == Current && s.NominalI > 0:
		return frac * s.NominalI
	case c.Kind == Current && s.ILA > 0:
		return frac * s.ILA
	}
	return 1e-6
}

// threeV reports whether sequence values exist for voltages (wye: three
// phase voltages; delta: two or three line-to-line voltages, the third
// following from the other two); threeI likewise for currents (delta: two
// or three currents).
func (s *Setup) threeV() bool {
	if s.Wiring == Delta {
		return count3(s.LL) >= 2
	}
	return s.Wiring == Wye && s.VIdx[0] >= 0 && s.VIdx[1] >= 0 && s.VIdx[2] >= 0
}

func (s *Setup) threeI() bool {
	if len(s.Circuits) > 0 {
		return false // the circuits carry the current sequences
	}
	if s.Wiring == Delta {
		return count3(s.IIdx) >= 2
	}
	return s.Wiring == Wye && s.IIdx[0] >= 0 && s.IIdx[1] >= 0 && s.IIdx[2] >= 0
}

// seqFloorChannel returns the channel whose near-zero floor judges the
// sequence values of kind k: the first phase (delta: line) channel present.
func (s *Setup) seqFloorChannel(k Kind) int {
	idx := s.VIdx
	if k == Current {
		idx = s.IIdx
	} else if s.Wiring == Delta {
		idx = s.LL
	}
	for _, x := range idx {
		if x >= 0 {
			return x
		}
	}
	return s.Reference
}

// HasSequence reports whether records carry sequence components (and
// unbalance) of voltages (k Voltage) or currents: wye with all three
// phases, delta with two or three lines (currents).
func (s *Setup) HasSequence(k Kind) bool {
	if k == Current {
		return s.threeI()
	}
	return s.threeV()
}

// HasTotal reports whether records carry three-phase (or single-phase)
// totals: a phase pair exists, or a delta hook-up has its wattmeter
// elements.
func (s *Setup) HasTotal() bool {
	return len(s.Pairs) > 0 || (s.Wiring == Delta && len(s.Circuits) == 0 && count3(s.IIdx) >= 2)
}

func count3(idx [3]int) int {
	n := 0
	for _, x := range idx {
		if x >= 0 {
			n++
		}
	}
	return n
}

// NewRecord returns a Record whose slices are sized for s once: Channels
// with one Harmonic per order, Phases per pair, SeqV and SeqI per order when
// the wiring is wye with three voltages (currents). Compute and
// Aggregator.Result reuse them.
func NewRecord(s *Setup) *Record {
	r := &Record{}
	shape(s, r)
	return r
}

// shape (re)sizes r's slices for s when they do not match; it allocates only
// when r was not made by NewRecord(s).
func shape(s *Setup, r *Record) {
	if len(s.Circuits) > 0 || len(r.Circuits) > 0 {
		shapeCircuits(s, r)
	}
	if shaped(s, r) {
		return
	}
	r.Channels = make([]ChannelValues, len(s.Channels))
	for i := range r.Channels {
		r.Channels[i].H = make([]Harmonic, len(s.Orders))
		for k, h := range s.Orders {
			r.Channels[i].H[k].H = h
		}
	}
	r.Phases = make([]PhaseValues, len(s.Pairs))
	for i, p := range s.Pairs {
		r.Phases[i].Phase = p.Phase
	}
	r.SeqV, r.SeqI = nil, nil
	if s.threeV() {
		r.SeqV = newSeq(s.Orders)
	}
	if s.threeI() {
		r.SeqI = newSeq(s.Orders)
	}
}

func newSeq(orders []int) []Seq {
	q := make([]Seq, len(orders))
	for k, h := range orders {
		q[k].H = h
	}
	return q
}

func shaped(s *Setup, r *Record) bool {
	if len(r.Channels) != len(s.Channels) || len(r.Phases) != len(s.Pairs) {
		return false
	}
	for i := range r.Channels {
		if len(r.Channels[i].H) != len(s.Orders) {
			return false
		}
	}
	nv, ni := 0, 0
	if s.threeV() {
		nv = len(s.Orders)
	}
	if s.threeI() {
		ni = len(s.Orders)
	}
	return len(r.SeqV) == nv && len(r.SeqI) == ni
}
