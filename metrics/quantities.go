package metrics

import "github.com/gridloupe/gridloupe/metrics/quantity"

// Field returns the value of per-channel quantity id (metrics/quantity's
// table) in v, for the writers, the store codec and the alarm rules that
// walk the table. It panics on an id outside the table (a programmer
// error). Adding a quantity: a row in metrics/quantity, a field in
// ChannelValues and a case here, and its computation in Compute.
func (v *ChannelValues) Field(id quantity.ID) *float64 {
	switch id {
	case quantity.RMS:
		return &v.RMS
	case quantity.DC:
		return &v.DC
	case quantity.THD:
		return &v.THDPct
	case quantity.THDH50:
		return &v.THDH50Pct
	case quantity.TDD:
		return &v.TDDPct
	case quantity.TDDH50:
		return &v.TDDH50Pct
	case quantity.CrestFactor:
		return &v.CrestFactor
	}
	panic("metrics: per-channel quantity id outside the table")
}

// Field returns the value of per-phase quantity id in v; it panics on an
// id outside the table.
func (v *PhaseValues) Field(id quantity.ID) *float64 {
	switch id {
	case quantity.P:
		return &v.P
	case quantity.P1:
		return &v.P1
	case quantity.Q1:
		return &v.Q1
	case quantity.S:
		return &v.S
	case quantity.S1:
		return &v.S1
	case quantity.SN:
		return &v.SN
	case quantity.DI:
		return &v.DI
	case quantity.DV:
		return &v.DV
	case quantity.SH:
		return &v.SH
	case quantity.PF:
		return &v.PF
	case quantity.DPF:
		return &v.DPF
	}
	panic("metrics: per-phase quantity id outside the table")
}

// Applies reports whether per-channel quantity q is present on channel ci
// of s (README "Record": a key that does not apply is absent).
func (s *Setup) Applies(q quantity.Q, ci int) bool {
	return q.Applies(s.Channels[ci].Kind == Current, s.AllOrders, s.ILA > 0)
}

// crest returns channel ci's crest factor, peak |x| over rms, or null when
// the RMS is below the channel's near-zero floor.
func (w *window) crest(ci int, rms float64) float64 {
	if !(rms >= w.s.floor(ci)) {
		return w.floorNull(w.s.naturalFloor(ci))
	}
	return w.def(w.in.Ch[ci].Peak / rms)
}
