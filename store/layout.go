package store

import (
	"encoding/json"
	"fmt"

	"github.com/gridloupe/gridloupe/metrics"
)

// maxChannels and maxOrder bound a layout so a record's size stays sane.
const (
	maxChannels = 64
	maxOrder    = 1000
)

// layoutJSON is the stored form of a metrics.Setup. It names every field
// explicitly so the file format does not follow Go field names.
type layoutJSON struct {
	Channels  []channelJSON `json:"channels"`
	Orders    []int         `json:"orders"`
	AllOrders bool          `json:"all_orders"`
	Wiring    string        `json:"wiring"`
	NominalV  float64       `json:"nominal_v"`
	NominalI  float64       `json:"nominal_a"`
	ILA       float64       `json:"il_a"`
	Reference int           `json:"reference"`
	Pairs     []pairJSON    `json:"pairs"`
	Neutral   int           `json:"neutral"`
	VIdx      [3]int        `json:"v_idx"`
	IIdx      [3]int        `json:"i_idx"`
	Circuits  []circuitJSON `json:"circuits,omitempty"`
}

type circuitJSON struct {
	Name     string  `json:"name"`
	Currents []int   `json:"currents"`
	ILA      float64 `json:"il_a,omitempty"`
}

type channelJSON struct {
	Name      string  `json:"name"`
	Kind      string  `json:"kind"`
	Phase     string  `json:"phase"`
	FullScale float64 `json:"full_scale"`
	DelayS    float64 `json:"delay_s"`
}

type pairJSON struct {
	Phase string `json:"phase"`
	V     int    `json:"v"`
	I     int    `json:"i"`
}

var wiringNames = map[metrics.Wiring]string{metrics.SinglePhase: "single-phase", metrics.Wye: "wye", metrics.Delta: "delta"}

// validateLayout checks what the record codec relies on.
func validateLayout(s *metrics.Setup) error {
	if s == nil {
		return fmt.Errorf("nil setup: %w", ErrBadLayout)
	}
	if n := len(s.Channels); n == 0 || n > maxChannels {
		return fmt.Errorf("%d channels (1..%d allowed): %w", n, maxChannels, ErrBadLayout)
	}
	if len(s.Orders) == 0 || s.Orders[0] != 1 {
		return fmt.Errorf("orders must start with 1: %w", ErrBadLayout)
	}
	for i := 1; i < len(s.Orders); i++ {
		if s.Orders[i] <= s.Orders[i-1] || s.Orders[i] > maxOrder {
			return fmt.Errorf("orders must ascend within 1..%d: %w", maxOrder, ErrBadLayout)
		}
	}
	for i, c := range s.Channels {
		if c.Name == "" {
			return fmt.Errorf("channel %d has no name: %w", i, ErrBadLayout)
		}
		if c.Kind != metrics.Voltage && c.Kind != metrics.Current {
			return fmt.Errorf("channel %q: kind %d: %w", c.Name, c.Kind, ErrBadLayout)
		}
	}
	if _, ok := wiringNames[s.Wiring]; !ok {
		return fmt.Errorf("wiring %d: %w", s.Wiring, ErrBadLayout)
	}
	if s.Reference < 0 || s.Reference >= len(s.Channels) {
		return fmt.Errorf("reference index %d: %w", s.Reference, ErrBadLayout)
	}
	return nil
}

func marshalLayout(s *metrics.Setup) ([]byte, error) {
	if err := validateLayout(s); err != nil {
		return nil, err
	}
	l := layoutJSON{
		Orders: append([]int(nil), s.Orders...), AllOrders: s.AllOrders, Wiring: wiringNames[s.Wiring],
		NominalV: s.NominalV, NominalI: s.NominalI, ILA: s.ILA, Reference: s.Reference,
		Neutral: s.Neutral, VIdx: s.VIdx, IIdx: s.IIdx,
	}
	for _, c := range s.Channels {
		ph := string(rune(c.Phase))
		if c.To != 0 {
			ph += string(rune(c.To)) // a line-to-line voltage (delta)
		}
		l.Channels = append(l.Channels, channelJSON{Name: c.Name, Kind: c.Kind.String(),
			Phase: ph, FullScale: c.FullScale, DelayS: c.DelayS})
	}
	for _, p := range s.Pairs {
		l.Pairs = append(l.Pairs, pairJSON{Phase: string(rune(p.Phase)), V: p.V, I: p.I})
	}
	for _, c := range s.Circuits {
		l.Circuits = append(l.Circuits, circuitJSON{Name: c.Name, Currents: append([]int(nil), c.Currents...), ILA: c.ILA})
	}
	b, err := json.Marshal(l)
	if err != nil {
		return nil, fmt.Errorf("store: encode layout: %w", err)
	}
	return b, nil
}

func phaseByte(s string) (byte, error) {
	if len(s) != 1 {
		return 0, fmt.Errorf("phase %q: %w", s, ErrCorrupt)
	}
	return s[0], nil
}

func unmarshalLayout(b []byte) (*metrics.Setup, error) {
	var l layoutJSON
	if err := json.Unmarshal(b, &l); err != nil {
		return nil, fmt.Errorf("decode layout: %w: %w", ErrCorrupt, err)
	}
	s := &metrics.Setup{
		Orders: l.Orders, AllOrders: l.AllOrders, NominalV: l.NominalV, NominalI: l.NominalI,
		ILA: l.ILA, Reference: l.Reference, Neutral: l.Neutral, VIdx: l.VIdx, IIdx: l.IIdx,
	}
	for w, name := range wiringNames {
		if name == l.Wiring {
			s.Wiring = w
		}
	}
	for _, c := range l.Channels {
		var to byte
		p := c.Phase
		if len(p) == 2 && s.Wiring == metrics.Delta {
			p, to = p[:1], p[1]
		}
		ph, err := phaseByte(p)
		if err != nil {
			return nil, err
		}
		ch := metrics.Channel{Name: c.Name, Phase: ph, To: to, FullScale: c.FullScale, DelayS: c.DelayS}
		switch c.Kind {
		case metrics.Voltage.String():
			ch.Kind = metrics.Voltage
		case metrics.Current.String():
			ch.Kind = metrics.Current
		}
		s.Channels = append(s.Channels, ch)
	}
	for _, p := range l.Pairs {
		ph, err := phaseByte(p.Phase)
		if err != nil {
			return nil, err
		}
		s.Pairs = append(s.Pairs, metrics.Pair{Phase: ph, V: p.V, I: p.I})
	}
	if err := validateLayout(s); err != nil {
		return nil, fmt.Errorf("stored layout: %w: %w", ErrCorrupt, err)
	}
	s.Products = s.Pairs
	for _, c := range l.Circuits {
		s.Circuits = append(s.Circuits, metrics.Circuit{Name: c.Name, Currents: c.Currents, ILA: c.ILA})
	}
	if s.Wiring == metrics.Delta || len(s.Circuits) > 0 {
		// re-derive the line map and wattmeter elements (not stored)
		d, err := metrics.NewSetup(*s)
		if err != nil {
			return nil, fmt.Errorf("stored layout: %w: %w", ErrCorrupt, err)
		}
		return d, nil
	}
	return s, nil
}

// cloneSetup returns a deep copy, so callers cannot change the cached layout.
func cloneSetup(s *metrics.Setup) *metrics.Setup {
	c := *s
	c.Channels = append([]metrics.Channel(nil), s.Channels...)
	c.Orders = append([]int(nil), s.Orders...)
	c.Pairs = append([]metrics.Pair(nil), s.Pairs...)
	c.Products = append([]metrics.Pair(nil), s.Products...)
	c.Circuits = append([]metrics.Circuit(nil), s.Circuits...)
	return &c
}
