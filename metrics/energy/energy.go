package energy

import (
	"sync"

	"github.com/gridloupe/gridloupe/metrics"
)

// Quadrants of the fundamental reactive energy, by the signs of P and Q1
// as the meter sees them (common metering practice): Q1 P ≥ 0, Q ≥ 0
// (importing, inductive); Q2 P < 0, Q ≥ 0; Q3 P < 0, Q < 0; Q4 P ≥ 0,
// Q < 0 (importing, capacitive).
const (
	Q1 = iota
	Q2
	Q3
	Q4
)

// Counters are one circuit's energy registers, in Wh and varh. They only
// ever grow.
type Counters struct {
	ImportWh float64    // active energy taken from the supply (P > 0)
	ExportWh float64    // active energy fed back (P < 0), positive
	VarhQ    [4]float64 // fundamental reactive energy per quadrant, positive
}

// Add integrates one interval of power p (W) and fundamental reactive
// power q (var) lasting seconds. Null values add nothing (the interval's
// energy is lost, not guessed).
func (c *Counters) Add(p, q, seconds float64) {
	if metrics.IsNull(p) || !(seconds > 0) {
		return
	}
	h := seconds / 3600
	if p >= 0 {
		c.ImportWh += p * h
	} else {
		c.ExportWh -= p * h
	}
	if metrics.IsNull(q) {
		return
	}
	var k int
	switch {
	case p >= 0 && q >= 0:
		k = Q1
	case p < 0 && q >= 0:
		k = Q2
	case p < 0:
		k = Q3
	default:
		k = Q4
	}
	if q < 0 {
		q = -q
	}
	c.VarhQ[k] += q * h
}

// Circuit names a set of counters. DefaultCircuit is the whole metered
// point (the record's totals) when no circuits are configured.
const DefaultCircuit = "main"

// Reading is one circuit's counters at a moment.
type Reading struct {
	Circuit string
	Counters
}

// Meter keeps the counters of every circuit. Window is called on the
// measurement goroutine; Readings from any. Safe for concurrent use; Window
// does not allocate.
type Meter struct {
	mu       sync.Mutex
	circuits []string
	c        []Counters
}

// NewMeter returns a meter for the named circuits (nil = the default one),
// starting from restored counters (missing circuits start at zero; stored
// circuits no longer configured are dropped by the caller's next save).
func NewMeter(circuits []string, restored []Reading) *Meter {
	if len(circuits) == 0 {
		circuits = []string{DefaultCircuit}
	}
	m := &Meter{circuits: append([]string(nil), circuits...), c: make([]Counters, len(circuits))}
	for _, r := range restored {
		for i, n := range m.circuits {
			if n == r.Circuit {
				m.c[i] = r.Counters
			}
		}
	}
	return m
}

// Window integrates one measurement window. With circuits configured each
// circuit's counters take that circuit's own totals (r.Circuits, matched by
// name); without, the one circuit takes the record's total.
func (m *Meter) Window(r *metrics.Record) {
	m.mu.Lock()
	for i, name := range m.circuits {
		if len(r.Circuits) == 0 {
			m.c[i].Add(r.Total.P, r.Total.Q1, r.DurationS)
			continue
		}
		for _, cv := range r.Circuits {
			if cv.Name == name && cv.Rec != nil {
				m.c[i].Add(cv.Rec.Total.P, cv.Rec.Total.Q1, r.DurationS)
				break
			}
		}
	}
	m.mu.Unlock()
}

// Readings returns the counters of every circuit, in configured order.
func (m *Meter) Readings() []Reading {
	m.mu.Lock()
	defer m.mu.Unlock()
	out := make([]Reading, len(m.c))
	for i := range m.c {
		out[i] = Reading{Circuit: m.circuits[i], Counters: m.c[i]}
	}
	return out
}
