package metrics

import (
	"errors"
	"fmt"
	"slices"
)

// ErrCircuit reports a circuit that cannot be measured: no name, a name
// twice, a channel that is not a current or belongs to two circuits.
var ErrCircuit = errors.New("metrics: invalid circuit")

// Circuit is one load or feeder on the bus: its own current channels,
// sharing the bus voltage channels (an incomer and the drives it feeds).
type Circuit struct {
	Name     string
	Currents []int   // indices in Setup.Channels of the circuit's current channels
	ILA      float64 // the circuit's maximum demand load current; 0 = Setup.ILA

	// Derived by NewSetup: the circuit as a setup of its own (the bus
	// voltages and the circuit's currents), the main channel index of
	// each of its channels, and where its products start in
	// Setup.Products.
	Sub     *Setup
	Map     []int
	ProdOff int
}

// CircuitValues is one circuit's part of a record: its phases, totals,
// current sequence and unbalance live in Rec (made for Circuit.Sub); Rec's
// channel values repeat the main record's and are not printed.
type CircuitValues struct {
	Name string
	Rec  *Record
}

// IL returns the maximum demand load current that is the base of channel
// ci's TDD and pct_il: the channel's own (a circuit's), else Setup.ILA; 0
// for voltages.
func (s *Setup) IL(ci int) float64 {
	if ci < 0 || ci >= len(s.Channels) || s.Channels[ci].Kind != Current {
		return 0
	}
	if il := s.Channels[ci].ILA; il > 0 {
		return il
	}
	return s.ILA
}

// deriveCircuits builds each circuit's sub-setup and appends its products
// to s.Products. With circuits, the bus itself has no phase pairs: every
// current belongs to a circuit.
func (s *Setup) deriveCircuits() error {
	owner := make([]int, len(s.Channels))
	for i := range owner {
		owner[i] = -1
	}
	names := map[string]bool{}
	s.Pairs, s.Products = nil, nil
	var volts []int
	for i, c := range s.Channels {
		if c.Kind == Voltage {
			volts = append(volts, i)
		}
	}
	for k := range s.Circuits {
		c := &s.Circuits[k]
		if c.Name == "" || names[c.Name] {
			return fmt.Errorf("circuit %d %q: a unique, non-empty name: %w", k, c.Name, ErrCircuit)
		}
		names[c.Name] = true
		if len(c.Currents) == 0 {
			return fmt.Errorf("circuit %q: no current channels: %w", c.Name, ErrCircuit)
		}
		for _, ci := range c.Currents {
			if ci < 0 || ci >= len(s.Channels) || s.Channels[ci].Kind != Current {
				return fmt.Errorf("circuit %q: channel %d is not a current: %w", c.Name, ci, ErrCircuit)
			}
			if o := owner[ci]; o >= 0 {
				return fmt.Errorf("circuit %q: channel %q already belongs to circuit %q: %w", c.Name, s.Channels[ci].Name, s.Circuits[o].Name, ErrCircuit)
			}
			owner[ci] = k
			if c.ILA > 0 {
				s.Channels[ci].ILA = c.ILA
			}
		}
		c.Map = append(append([]int(nil), volts...), c.Currents...)
		sub := Setup{Orders: s.Orders, Wiring: s.Wiring, NominalV: s.NominalV, NominalI: s.NominalI, ILA: s.ILA, Reference: -1}
		if c.ILA > 0 {
			sub.ILA = c.ILA
		}
		for j, ci := range c.Map {
			sub.Channels = append(sub.Channels, s.Channels[ci])
			if ci == s.Reference {
				sub.Reference = j
			}
		}
		ns, err := NewSetup(sub)
		if err != nil {
			return fmt.Errorf("circuit %q: %w", c.Name, err)
		}
		c.Sub = ns
		c.ProdOff = len(s.Products)
		for _, p := range ns.Products {
			p.V, p.I = c.Map[p.V], c.Map[p.I]
			s.Products = append(s.Products, p)
		}
	}
	for ci, ch := range s.Channels {
		if ch.Kind == Current && owner[ci] < 0 {
			return fmt.Errorf("channel %q: with circuits, every current belongs to one: %w", ch.Name, ErrCircuit)
		}
	}
	return nil
}

// circuitInput fills in (sized for sub) from the main window's sums.
func circuitInput(c *Circuit, main *Input, in *Input) {
	for j, ci := range c.Map {
		if ci < len(main.Ch) {
			in.Ch[j] = main.Ch[ci]
		}
	}
	for k := range in.SumVI {
		if i := c.ProdOff + k; i < len(main.SumVI) {
			in.SumVI[k] = main.SumVI[i]
		}
	}
	in.FreqHz, in.OmegaHz, in.Lock = main.FreqHz, main.OmegaHz, main.Lock
}

// shapeCircuits sizes r.Circuits and its scratch inputs for s.
func shapeCircuits(s *Setup, r *Record) {
	if len(r.Circuits) == len(s.Circuits) && len(r.cin) == len(s.Circuits) {
		ok := true
		for k := range s.Circuits {
			ok = ok && r.Circuits[k].Rec != nil && shaped(s.Circuits[k].Sub, r.Circuits[k].Rec)
		}
		if ok {
			return
		}
	}
	r.Circuits = make([]CircuitValues, len(s.Circuits))
	r.cin = make([]Input, len(s.Circuits))
	for k := range s.Circuits {
		sub := s.Circuits[k].Sub
		r.Circuits[k] = CircuitValues{Name: s.Circuits[k].Name, Rec: NewRecord(sub)}
		r.cin[k] = Input{Ch: make([]ChannelSums, len(sub.Channels)), SumVI: make([]float64, len(sub.Products))}
	}
}

// computeCircuits fills every circuit's values from the window's sums and
// ORs their flags into the main record's.
func computeCircuits(s *Setup, in *Input, out *Record) {
	for k := range s.Circuits {
		c := &s.Circuits[k]
		circuitInput(c, in, &out.cin[k])
		cr := out.Circuits[k].Rec
		Compute(c.Sub, &out.cin[k], cr)
		out.Flags |= cr.Flags &^ (FlagNoLock | FlagRotationACB)
	}
}

// CircuitIndex returns the index of the named circuit, −1 when none.
func (s *Setup) CircuitIndex(name string) int {
	return slices.IndexFunc(s.Circuits, func(c Circuit) bool { return c.Name == name })
}
