package encode

import (
	"fmt"

	"github.com/gridloupe/gridloupe/metrics"
)

// appendJSONCircuits appends `,"circuits":{"<name>":{phases, total,
// sequence.current, unbalance.current_pct}, …}` for a setup with circuits,
// each circuit with the keys and presence rules of a record of its own
// (its channels are the main record's and are not repeated). Nothing
// without circuits, so such records keep their shape.
func appendJSONCircuits(dst []byte, s *metrics.Setup, r *metrics.Record) []byte {
	n := min(len(s.Circuits), len(r.Circuits))
	if n == 0 {
		return dst
	}
	dst = append(dst, `,"circuits":{`...)
	for k := range n {
		c, cr := &s.Circuits[k], r.Circuits[k].Rec
		if k > 0 {
			dst = append(dst, ',')
		}
		dst = appendJSONString(dst, c.Name)
		dst = append(dst, `:{`...)
		if cr == nil {
			dst = append(dst, '}')
			continue
		}
		sub := c.Sub
		lead := len(dst) // a key after this point needs a comma
		if m := min(len(sub.Pairs), len(cr.Phases)); m > 0 {
			dst = append(dst, `"phases":{`...)
			for j := range m {
				if j > 0 {
					dst = append(dst, ',')
				}
				dst = append(dst, '"', sub.Pairs[j].Phase, '"', ':')
				dst = appendJSONPhase(dst, &cr.Phases[j])
			}
			dst = append(dst, '}')
		}
		if sub.HasTotal() {
			if len(dst) == lead {
				dst = append(dst, `"total":`...)
				dst = appendJSONTotalBody(dst, &cr.Total, sub.Wiring == metrics.Delta)
			} else {
				dst = appendJSONTotal(dst, &cr.Total, sub.Wiring == metrics.Delta)
			}
		}
		if len(cr.SeqI) > 0 {
			if len(dst) > lead {
				dst = append(dst, ',')
			}
			dst = append(dst, `"sequence":{"current":`...)
			dst = appendJSONSeq(dst, cr.SeqI, true)
			dst = append(dst, `},"unbalance":{"current_pct":`...)
			dst = appendJSONNum(dst, cr.UnbI)
			dst = append(dst, '}')
		}
		dst = append(dst, '}')
	}
	return append(dst, '}')
}

// checkCircuits reports how r's circuits differ from s's.
func checkCircuits(s *metrics.Setup, r *metrics.Record) error {
	if len(r.Circuits) != len(s.Circuits) {
		return fmt.Errorf("%d circuit values for %d circuits: %w", len(r.Circuits), len(s.Circuits), ErrShape)
	}
	for k := range s.Circuits {
		cr := r.Circuits[k].Rec
		if cr == nil {
			return fmt.Errorf("circuit %q: no values: %w", s.Circuits[k].Name, ErrShape)
		}
		if err := CheckRecord(s.Circuits[k].Sub, cr); err != nil {
			return fmt.Errorf("circuit %q: %w", s.Circuits[k].Name, err)
		}
	}
	return nil
}

// csvCircuitHeader appends each circuit's columns, prefixed
// circuit.<name>.: phase.<p>.<key>, total.<key>, sequence.current.<h>.*,
// unbalance.current_pct.
func csvCircuitHeader(h []string, s *metrics.Setup) []string {
	for _, c := range s.Circuits {
		pre := "circuit." + c.Name + "."
		sub := c.Sub
		for _, pr := range sub.Pairs {
			for _, k := range phaseKeys {
				h = append(h, pre+"phase."+string(pr.Phase)+"."+k)
			}
		}
		if sub.HasTotal() {
			for _, k := range totalKeys {
				if k == "s_va" && sub.Wiring == metrics.Delta {
					continue
				}
				h = append(h, pre+"total."+k)
			}
		}
		if sub.HasSequence(metrics.Current) {
			for _, o := range sub.Orders {
				p := fmt.Sprintf("%ssequence.current.%d.", pre, o)
				h = append(h, p+"pos", p+"neg", p+"zero", p+"dominant")
			}
			h = append(h, pre+"unbalance.current_pct")
		}
	}
	return h
}

// appendCSVCircuits appends each circuit's cells in csvCircuitHeader's order.
func appendCSVCircuits(b []byte, s *metrics.Setup, r *metrics.Record) []byte {
	for k := range min(len(s.Circuits), len(r.Circuits)) {
		sub, cr := s.Circuits[k].Sub, r.Circuits[k].Rec
		b = appendCSVPhases(b, cr)
		if sub.HasTotal() {
			t := &cr.Total
			for i, v := range [...]float64{t.P, t.Q1, t.S, t.Se, t.Se1, t.Ve, t.Ie, t.PF, t.DPF} {
				if i == 2 && sub.Wiring == metrics.Delta {
					continue
				}
				b = cell(b, v)
			}
		}
		if sub.HasSequence(metrics.Current) {
			for j := range cr.SeqI {
				q := &cr.SeqI[j]
				b = cell(b, q.Pos)
				b = cell(b, q.Neg)
				b = cell(b, q.Zero)
				b = append(b, ',')
				b = append(b, dominant(q)...)
			}
			b = cell(b, cr.UnbI)
		}
	}
	return b
}

// circuitRows appends, for each circuit, a title line and its phase and
// total rows (the bus voltage beside each phase's current).
func (b *Blocks) circuitRows(buf []byte, r *metrics.Record, vthd, idist float64) []byte {
	nul := metrics.Null()
	for k := range min(len(b.s.Circuits), len(r.Circuits)) {
		c, cr := &b.s.Circuits[k], r.Circuits[k].Rec
		buf = append(buf, "circuit "...)
		buf = append(buf, printable(c.Name)...)
		buf = append(buf, '\n')
		for j, p := range c.Sub.Pairs {
			v, i := &r.Channels[c.Map[p.V]], &r.Channels[c.Map[p.I]]
			ph := &cr.Phases[j]
			buf = pad(buf, []byte{p.Phase}, bwLabel, true)
			buf = b.rowValues(buf, v.RMS, i.RMS, b.thd(v), b.current(i), vthd, idist, ph.PF, ph.DPF, ph.P, ph.Q1)
		}
		if c.Sub.Wiring != metrics.SinglePhase && c.Sub.HasTotal() {
			t := &cr.Total
			buf = pad(buf, []byte("total"), bwLabel, true)
			buf = b.rowValues(buf, t.Ve, t.Ie, nul, nul, 0, 0, t.PF, t.DPF, t.P, t.Q1)
		}
	}
	return buf
}
