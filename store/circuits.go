package store

import (
	"fmt"

	"github.com/gridloupe/gridloupe/metrics"
)

// Circuits follow the record's bus part (only for layouts with circuits,
// so records without them keep their bytes): per circuit, the phase count
// and phases (letter + the stored per-phase quantities, float32), the totals (11 float32) when the
// circuit has them, a presence byte for the current sequence, then the
// sequence (3 float32 per order) and the current unbalance (float32).

func appendCircuits(b []byte, r *metrics.Record, s *metrics.Setup) ([]byte, error) {
	if len(s.Circuits) == 0 {
		return b, nil
	}
	if len(r.Circuits) != len(s.Circuits) {
		return b, fmt.Errorf("%d circuits, layout has %d: %w", len(r.Circuits), len(s.Circuits), ErrBadLayout)
	}
	for k, c := range s.Circuits {
		cr := r.Circuits[k].Rec
		if cr == nil || len(cr.Phases) != len(c.Sub.Pairs) || (len(cr.SeqI) != 0 && len(cr.SeqI) != len(s.Orders)) {
			return b, fmt.Errorf("circuit %q: values do not match its layout: %w", c.Name, ErrBadLayout)
		}
		b = appendPhases(b, cr.Phases)
		if c.Sub.HasTotal() {
			t := &cr.Total
			for _, v := range [...]float64{t.P, t.Q1, t.S, t.Se, t.Se1, t.Ve, t.Ie, t.PF, t.DPF, t.P1Pos, t.Q1Pos} {
				b = appendF32(b, v)
			}
		}
		var pres byte
		if len(cr.SeqI) > 0 {
			pres = 1
		}
		b = append(b, pres)
		for _, q := range cr.SeqI {
			b = appendF32(b, q.Pos)
			b = appendF32(b, q.Neg)
			b = appendF32(b, q.Zero)
		}
		b = appendF32(b, cr.UnbI)
	}
	return b, nil
}

func readCircuits(rd *reader, r *metrics.Record, s *metrics.Setup, ver byte) error {
	if len(s.Circuits) == 0 {
		return nil
	}
	r.Circuits = make([]metrics.CircuitValues, len(s.Circuits))
	for k, c := range s.Circuits {
		cr := newRecord(c.Sub)
		for i := range cr.Channels {
			copyChannel(&cr.Channels[i], &r.Channels[c.Map[i]])
		}
		var err error
		if cr.Phases, err = readPhases(rd, ver); err != nil {
			return fmt.Errorf("circuit %q: %w", c.Name, err)
		}
		if c.Sub.HasTotal() {
			t := &cr.Total
			t.P, t.Q1, t.S, t.Se, t.Se1 = rd.f32(), rd.f32(), rd.f32(), rd.f32(), rd.f32()
			t.Ve, t.Ie, t.PF, t.DPF, t.P1Pos, t.Q1Pos = rd.f32(), rd.f32(), rd.f32(), rd.f32(), rd.f32(), rd.f32()
		}
		cr.UnbV = nan()
		if rd.u8() != 0 && rd.err == nil {
			cr.SeqI = make([]metrics.Seq, len(s.Orders))
			for j := range cr.SeqI {
				cr.SeqI[j] = metrics.Seq{H: s.Orders[j], Pos: rd.f32(), Neg: rd.f32(), Zero: rd.f32()}
			}
		}
		cr.UnbI = rd.f32()
		r.Circuits[k] = metrics.CircuitValues{Name: c.Name, Rec: cr}
	}
	return nil
}

// copyChannel fills a circuit record's channel values from the bus record
// (the circuit's channels are the bus's, not stored twice).
func copyChannel(dst, src *metrics.ChannelValues) {
	h := dst.H
	*dst = *src
	dst.H = append(h[:0], src.H...)
}

// circuitBytes is one circuit's part of a record.
func circuitBytes(sub *metrics.Setup) int {
	_, perPh := storedScalars()
	n := 1 + len(sub.Pairs)*(1+perPh*4) + 1 + 4
	if sub.HasTotal() {
		n += 11 * 4
	}
	if sub.HasSequence(metrics.Current) {
		n += len(sub.Orders) * 3 * 4
	}
	return n
}
