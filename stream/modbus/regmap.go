package modbus

import (
	"fmt"
	"io"
	"strconv"

	"github.com/gridloupe/gridloupe/metrics"
	"github.com/gridloupe/gridloupe/metrics/energy"
	"github.com/gridloupe/gridloupe/stream/live"
)

// LayoutVersion is held in register 0. It changes whenever a quantity
// moves to another address or changes its unit; registers added at unused
// addresses keep it.
const LayoutVersion = 1

// Address blocks of the map (0-based register addresses, as the protocol
// carries them).
const (
	headerBase = 0    // layout version, word order, alarm count, word-order check value
	alarmBase  = 100  // one uint16 per alarm rule, config order
	alarmMax   = 900  // alarm registers available
	levelBase  = 1000 // the 3 s block; the 10 min block follows at levelBase+levelSize
	levelSize  = 1000 // registers per level block
	energyBase = 3000 // energy counters, 16 registers per circuit
	energyStep = 16
	energyMax  = 50   // circuits the energy block holds
	demandBase = 3900 // demand and IL
)

// CheckValue is the float32 held at registers 4-5: an integrator reads it
// to confirm the word order (1234.5 reads back only in the right order).
const CheckValue float32 = 1234.5

// Type is a register value's encoding.
type Type uint8

// Register types.
const (
	Float32 Type = iota + 1 // IEEE-754 binary32 in two registers
	Uint16                  // one register
)

func (t Type) String() string {
	if t == Uint16 {
		return "uint16"
	}
	return "float32"
}

// Regs returns the registers a value of type t occupies.
func (t Type) Regs() int {
	if t == Uint16 {
		return 1
	}
	return 2
}

// Entry is one value of the map.
type Entry struct {
	Address  uint16           // first register, 0-based
	Quantity string           // key path: freq_hz, total.pf, phase.a.dpf, va.rms, age_s, alarm.<name>, ...
	Unit     string           // Hz, V, A, W, var, VA, %, 1, s, or "" for codes and bits
	Level    metrics.Interval // 3s or 10min; 0 for header and alarm registers
	Type     Type
	value    func(b *live.Board, r *metrics.Record, age float64) (float64, uint16)
}

// Map is the register map of one configuration. It is read-only after
// NewMap and safe for concurrent use.
type Map struct {
	Entries []Entry // ascending addresses
	// regs maps each register address to its entry index and the word
	// within the entry (0 or 1).
	regs map[uint16]regRef
}

type regRef struct {
	entry int
	word  uint8
}

// NewMap lays out the registers for records of setup s, the alarm rules
// named alarms (config order) and the energy circuits (nil = none).
// lowFirst is recorded in register 1.
func NewMap(s *metrics.Setup, alarms, circuits []string, lowFirst bool) (*Map, error) {
	if len(circuits) > energyMax {
		return nil, fmt.Errorf("%w: %d circuits, the energy block holds %d", ErrMap, len(circuits), energyMax)
	}
	if len(alarms) > alarmMax {
		return nil, fmt.Errorf("%w: %d alarm rules, the alarm block holds %d", ErrMap, len(alarms), alarmMax)
	}
	m := &Map{regs: map[uint16]regRef{}}
	order := uint16(0)
	if lowFirst {
		order = 1
	}
	m.add(Entry{Address: headerBase, Quantity: "layout_version", Type: Uint16,
		value: func(*live.Board, *metrics.Record, float64) (float64, uint16) { return 0, LayoutVersion }})
	m.add(Entry{Address: headerBase + 1, Quantity: "word_order", Type: Uint16,
		value: func(*live.Board, *metrics.Record, float64) (float64, uint16) { return 0, order }})
	m.add(Entry{Address: headerBase + 2, Quantity: "alarms.active", Type: Uint16,
		value: func(b *live.Board, _ *metrics.Record, _ float64) (float64, uint16) { return 0, uint16(len(b.Active())) }})
	m.add(Entry{Address: headerBase + 4, Quantity: "word_order_check", Type: Float32,
		value: func(*live.Board, *metrics.Record, float64) (float64, uint16) { return float64(CheckValue), 0 }})
	for i, name := range alarms {
		m.add(Entry{Address: alarmBase + uint16(i), Quantity: "alarm." + name, Type: Uint16,
			value: func(b *live.Board, _ *metrics.Record, _ float64) (float64, uint16) {
				for _, a := range b.Active() {
					if a == name {
						return 0, 1
					}
				}
				return 0, 0
			}})
	}
	fields := live.Fields(s)
	for li, iv := range live.Levels() {
		base := uint16(levelBase + li*levelSize)
		m.add(Entry{Address: base, Quantity: "age_s", Unit: "s", Level: iv, Type: Float32,
			value: func(_ *live.Board, r *metrics.Record, age float64) (float64, uint16) {
				if r == nil {
					return metrics.Null(), 0
				}
				return age, 0
			}})
		m.add(Entry{Address: base + 2, Quantity: "flags", Level: iv, Type: Uint16,
			value: func(_ *live.Board, r *metrics.Record, _ float64) (float64, uint16) {
				if r == nil {
					return 0, 0
				}
				return 0, uint16(r.Flags)
			}})
		addr := int(base) + 4
		for _, f := range fields {
			if addr+2 > int(base)+levelSize {
				return nil, fmt.Errorf("%w: %d quantities per level, a level block holds %d registers", ErrMap, len(fields), levelSize)
			}
			m.add(Entry{Address: uint16(addr), Quantity: f.Key, Unit: f.Unit, Level: iv, Type: Float32,
				value: func(_ *live.Board, r *metrics.Record, _ float64) (float64, uint16) { return f.Value(r), 0 }})
			addr += 2
		}
	}
	m.addEnergy(circuits)
	return m, nil
}

// addEnergy lays out the energy block (per circuit, kWh and kvarh) and the
// demand block. Values read NaN until the gateway has published them.
func (m *Map) addEnergy(circuits []string) {
	if len(circuits) == 0 {
		return
	}
	reading := func(b *live.Board, ci int) (energy.Reading, bool) {
		e := b.Energy()
		if !e.Valid || ci >= len(e.Readings) {
			return energy.Reading{}, false
		}
		return e.Readings[ci], true
	}
	for ci, name := range circuits {
		base := uint16(energyBase + ci*energyStep)
		regs := []struct {
			q   string
			get func(r energy.Reading) float64
		}{
			{"import_kwh", func(r energy.Reading) float64 { return r.ImportWh / 1000 }},
			{"export_kwh", func(r energy.Reading) float64 { return r.ExportWh / 1000 }},
			{"kvarh_q1", func(r energy.Reading) float64 { return r.VarhQ[energy.Q1] / 1000 }},
			{"kvarh_q2", func(r energy.Reading) float64 { return r.VarhQ[energy.Q2] / 1000 }},
			{"kvarh_q3", func(r energy.Reading) float64 { return r.VarhQ[energy.Q3] / 1000 }},
			{"kvarh_q4", func(r energy.Reading) float64 { return r.VarhQ[energy.Q4] / 1000 }},
		}
		for k, rg := range regs {
			unit := "kWh"
			if k >= 2 {
				unit = "kvarh"
			}
			m.add(Entry{Address: base + uint16(2*k), Quantity: "energy." + name + "." + rg.q, Unit: unit, Type: Float32,
				value: func(b *live.Board, _ *metrics.Record, _ float64) (float64, uint16) {
					r, ok := reading(b, ci)
					if !ok {
						return metrics.Null(), 0
					}
					return rg.get(r), 0
				}})
		}
	}
	dem := func(get func(e live.Energy) float64) func(*live.Board, *metrics.Record, float64) (float64, uint16) {
		return func(b *live.Board, _ *metrics.Record, _ float64) (float64, uint16) {
			e := b.Energy()
			if !e.Valid {
				return metrics.Null(), 0
			}
			return get(e), 0
		}
	}
	addr := uint16(demandBase)
	put := func(q, unit string, get func(e live.Energy) float64) {
		m.add(Entry{Address: addr, Quantity: q, Unit: unit, Type: Float32, value: dem(get)})
		addr += 2
	}
	for p, ph := range []string{"a", "b", "c"} {
		put("demand.phase."+ph+".i_a", "A", func(e live.Energy) float64 { return e.Demand.A[p] })
	}
	put("demand.total.p_w", "W", func(e live.Energy) float64 { return e.Demand.W })
	for p, ph := range []string{"a", "b", "c"} {
		put("demand.month_max.phase."+ph+".i_a", "A", func(e live.Energy) float64 { return e.Demand.Month.MaxA[p] })
	}
	put("demand.month_max.total.p_w", "W", func(e live.Energy) float64 { return e.Demand.Month.MaxW })
	put("il_a", "A", func(e live.Energy) float64 {
		if e.ILConfig > 0 {
			return e.ILConfig
		}
		return e.Estimate.A
	})
	put("il_estimate_a", "A", func(e live.Energy) float64 { return e.Estimate.A })
}

func (m *Map) add(e Entry) {
	idx := len(m.Entries)
	m.Entries = append(m.Entries, e)
	for w := range e.Type.Regs() {
		m.regs[e.Address+uint16(w)] = regRef{idx, uint8(w)}
	}
}

// Lookup returns the entry at address, if the map holds one starting there.
func (m *Map) Lookup(address uint16) (Entry, bool) {
	r, ok := m.regs[address]
	if !ok || r.word != 0 {
		return Entry{}, false
	}
	return m.Entries[r.entry], true
}

// WriteCSV prints the map with the header address,quantity,unit,level,type.
// Quantities are key paths and channel and rule names hold no commas or
// quotes, so no field needs quoting except an alarm rule name that does.
func (m *Map) WriteCSV(w io.Writer) error {
	b := []byte("address,quantity,unit,level,type\n")
	for _, e := range m.Entries {
		b = strconv.AppendUint(b, uint64(e.Address), 10)
		b = append(b, ',')
		b = appendCSV(b, e.Quantity)
		b = append(b, ',')
		b = append(b, e.Unit...)
		b = append(b, ',')
		if e.Level != 0 {
			b = append(b, e.Level.String()...)
		}
		b = append(b, ',')
		b = append(b, e.Type.String()...)
		b = append(b, '\n')
	}
	_, err := w.Write(b)
	return err
}

// appendCSV appends s as one CSV field (RFC 4180 quoting when needed).
func appendCSV(b []byte, s string) []byte {
	need := false
	for i := 0; i < len(s); i++ {
		if c := s[i]; c == ',' || c == '"' || c == '\n' || c == '\r' {
			need = true
			break
		}
	}
	if !need {
		return append(b, s...)
	}
	b = append(b, '"')
	for i := 0; i < len(s); i++ {
		if s[i] == '"' {
			b = append(b, '"')
		}
		b = append(b, s[i])
	}
	return append(b, '"')
}
