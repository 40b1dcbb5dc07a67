package store

import (
	"encoding/binary"
	"fmt"
	"math"

	"github.com/gridloupe/gridloupe/metrics"
	"github.com/gridloupe/gridloupe/metrics/quantity"
)

// recordVersion is the leading byte of every stored record. Version 2 adds
// the total's positive-sequence P1⁺ and Q1⁺ (which the 2 h aggregation
// needs for dpf); version 1 records decode them as null. Version 3 is the
// slim 3 s form (codec3s.go). Version 4 (full) and 5 (slim) add
// crest_factor per channel; versions 1 to 3 decode it as null. The per-channel and per-phase scalars are the
// stored quantities of metrics/quantity in table order; a quantity whose
// Since is above a record's version decodes as null.
const recordVersion = 4

// RecordBudget8Ch50 is the byte budget of one stored record with 8 channels,
// all 50 orders, three phases and both sequence sets (see the package doc).
const RecordBudget8Ch50 = 4096

// nullPhase is the int16 stored for an undefined phase angle.
const nullPhase = math.MinInt16

// presence bits.
const (
	hasFreq10s = 1 << iota
	hasSeqV
	hasSeqI
	hasTotal // totals without phases (delta)
)

// channel flag bits.
const (
	chPctNull = 1 << iota
	chPctILNull
)

var be = binary.BigEndian

func appendF32(b []byte, v float64) []byte { return be.AppendUint32(b, math.Float32bits(float32(v))) }

func appendPhase(b []byte, deg float64) []byte {
	if deg != deg {
		return be.AppendUint16(b, uint16(0x8000))
	}
	c := math.Round(deg * 100)
	// Angles are in (−180, 180]; clamp so a stray value cannot hit the null sentinel.
	c = math.Max(-18000, math.Min(18000, c))
	return be.AppendUint16(b, uint16(int16(c)))
}

// encodeRecord appends r's compact form (layout s, id lid) to dst.
func encodeRecord(dst []byte, r *metrics.Record, lid uint16, s *metrics.Setup) ([]byte, error) {
	return encodeRec(dst, r, lid, s, false)
}

// encodeRec appends r in the full form (recordVersion) or, with slim, in
// the slim 3 s form (recordVersionSlim, codec3s.go).
func encodeRec(dst []byte, r *metrics.Record, lid uint16, s *metrics.Setup, slim bool) ([]byte, error) {
	if err := checkLayout(r, s); err != nil {
		return dst, err
	}
	pres, deltaTotal := presence(r, s)
	ver := byte(recordVersion)
	if slim {
		ver = recordVersionSlim
	}
	b := append(dst, ver)
	b = be.AppendUint16(b, lid)
	b = be.AppendUint64(b, uint64(r.Start.UnixNano()))
	b = be.AppendUint64(b, math.Float64bits(r.DurationS))
	b = binary.AppendUvarint(b, r.Samples)
	b = be.AppendUint16(b, uint16(r.Flags))
	b = append(b, pres)
	b = appendF32(b, r.FreqHz)
	if r.HasFreq10s {
		b = appendF32(b, r.Freq10sHz)
	}
	b = appendChannels(b, r.Channels, slim)
	b = appendPhases(b, r.Phases)
	if len(r.Phases) > 0 || deltaTotal {
		t := &r.Total
		for _, v := range [...]float64{t.P, t.Q1, t.S, t.Se, t.Se1, t.Ve, t.Ie, t.PF, t.DPF, t.P1Pos, t.Q1Pos} {
			b = appendF32(b, v)
		}
	}
	for _, sq := range [2][]metrics.Seq{r.SeqV, r.SeqI} {
		if slim && len(sq) > 0 {
			sq = sq[:1] // the fundamental's only
		}
		for j := range sq {
			b = appendF32(b, sq[j].Pos)
			b = appendF32(b, sq[j].Neg)
			b = appendF32(b, sq[j].Zero)
		}
	}
	b = appendF32(b, r.UnbV)
	b = appendF32(b, r.UnbI)
	return appendCircuits(b, r, s)
}

// checkLayout returns an ErrBadLayout error unless r has s's channels, each
// with s's orders in order, at most three phases, and sequences (when
// present) over s's orders.
func checkLayout(r *metrics.Record, s *metrics.Setup) error {
	no := len(s.Orders)
	if len(r.Channels) != len(s.Channels) {
		return fmt.Errorf("%d channels, layout has %d: %w", len(r.Channels), len(s.Channels), ErrBadLayout)
	}
	for i := range r.Channels {
		h := r.Channels[i].H
		if len(h) != no {
			return fmt.Errorf("channel %q: %d orders, layout has %d: %w", s.Channels[i].Name, len(h), no, ErrBadLayout)
		}
		for j := range h {
			if h[j].H != s.Orders[j] {
				return fmt.Errorf("channel %q: order %d, layout has %d: %w", s.Channels[i].Name, h[j].H, s.Orders[j], ErrBadLayout)
			}
		}
	}
	if len(r.Phases) > 3 {
		return fmt.Errorf("%d phases: %w", len(r.Phases), ErrBadLayout)
	}
	for _, sq := range [2][]metrics.Seq{r.SeqV, r.SeqI} {
		if len(sq) != 0 && len(sq) != no {
			return fmt.Errorf("%d sequence orders, layout has %d: %w", len(sq), no, ErrBadLayout)
		}
	}
	return nil
}

// presence returns the record's presence byte (the 10 s frequency, each
// sequence, a delta circuit's totals without phases) and whether the
// totals are stored for a delta record without phases.
func presence(r *metrics.Record, s *metrics.Setup) (pres byte, deltaTotal bool) {
	if r.HasFreq10s {
		pres |= hasFreq10s
	}
	for k, sq := range [2][]metrics.Seq{r.SeqV, r.SeqI} {
		if len(sq) > 0 {
			pres |= hasSeqV << k
		}
	}
	// delta records carry totals without phases
	deltaTotal = len(r.Phases) == 0 && s.Wiring == metrics.Delta && s.HasTotal()
	if deltaTotal {
		pres |= hasTotal
	}
	return pres, deltaTotal
}

// appendChannels appends each channel's null flags, its stored quantities
// (the quantity table's Out&Store rows, in table order) and its harmonics:
// every order's RMS and phase, or in the slim form appendSlimHarmonics'.
func appendChannels(b []byte, chans []metrics.ChannelValues, slim bool) []byte {
	for i := range chans {
		c := &chans[i]
		var f byte
		if c.H[0].Pct != c.H[0].Pct {
			f |= chPctNull
		}
		if c.H[0].PctIL != c.H[0].PctIL {
			f |= chPctILNull
		}
		b = append(b, f)
		for id := range quantity.NumChannel {
			if quantity.Channel(id).Out&quantity.Store != 0 {
				b = appendF32(b, *c.Field(id))
			}
		}
		if slim {
			b = appendSlimHarmonics(b, c.H)
			continue
		}
		for j := range c.H {
			b = appendF32(b, c.H[j].RMS)
			b = appendPhase(b, c.H[j].PhaseDeg)
		}
	}
	return b
}

// reader consumes a byte slice; the first short read sets err and later reads return zero.
type reader struct {
	b   []byte
	err error
}

func (r *reader) take(n int) []byte {
	if r.err != nil || len(r.b) < n {
		if r.err == nil {
			r.err = fmt.Errorf("record truncated: %w", ErrCorrupt)
		}
		return nil
	}
	p := r.b[:n]
	r.b = r.b[n:]
	return p
}

func (r *reader) u8() byte {
	if p := r.take(1); p != nil {
		return p[0]
	}
	return 0
}

func (r *reader) u16() uint16 {
	if p := r.take(2); p != nil {
		return be.Uint16(p)
	}
	return 0
}

func (r *reader) u64() uint64 {
	if p := r.take(8); p != nil {
		return be.Uint64(p)
	}
	return 0
}

func (r *reader) f32() float64 {
	if p := r.take(4); p != nil {
		return float64(math.Float32frombits(be.Uint32(p)))
	}
	return 0
}

func (r *reader) phase() float64 {
	v := int16(r.u16())
	if v == nullPhase {
		return math.NaN()
	}
	return float64(v) / 100
}

func (r *reader) uvarint() uint64 {
	if r.err != nil {
		return 0
	}
	v, n := binary.Uvarint(r.b)
	if n <= 0 {
		r.err = fmt.Errorf("bad uvarint: %w", ErrCorrupt)
		return 0
	}
	r.b = r.b[n:]
	return v
}

// recordLayoutID returns the layout id of an encoded record.
func recordLayoutID(b []byte) (uint16, error) {
	if len(b) < 3 {
		return 0, fmt.Errorf("record of %d bytes: %w", len(b), ErrCorrupt)
	}
	if b[0] < 1 || b[0] > recordVersionSlim {
		return 0, fmt.Errorf("record version %d: %w", b[0], ErrCorrupt)
	}
	return be.Uint16(b[1:3]), nil
}

// newRecord returns a Record whose slices are sized for layout s.
func newRecord(s *metrics.Setup) *metrics.Record {
	r := &metrics.Record{Channels: make([]metrics.ChannelValues, len(s.Channels))}
	hs := make([]metrics.Harmonic, len(s.Channels)*len(s.Orders))
	for i := range r.Channels {
		r.Channels[i].H = hs[i*len(s.Orders) : (i+1)*len(s.Orders) : (i+1)*len(s.Orders)]
	}
	return r
}

// decodeRecord decodes b, written with layout s, into a new Record.
func decodeRecord(b []byte, iv metrics.Interval, s *metrics.Setup) (*metrics.Record, error) {
	if _, err := recordLayoutID(b); err != nil {
		return nil, err
	}
	rd := &reader{b: b[3:]}
	r := newRecord(s)
	r.Interval = iv
	r.Start = unixNano(int64(rd.u64()))
	r.DurationS = math.Float64frombits(rd.u64())
	r.Samples = rd.uvarint()
	r.Flags = metrics.Flags(rd.u16())
	pres := rd.u8()
	r.FreqHz = rd.f32()
	r.Freq10sHz = math.NaN()
	if pres&hasFreq10s != 0 {
		r.HasFreq10s = true
		r.Freq10sHz = rd.f32()
	}
	for i := range r.Channels {
		c := &r.Channels[i]
		f := rd.u8()
		for id := range quantity.NumChannel {
			if q := quantity.Channel(id); q.Out&quantity.Store != 0 {
				*c.Field(id) = storedF32(rd, q, b[0])
			}
		}
		if slimForm(b[0]) {
			rd.slimHarmonics(c.H, s.Orders)
			fillPct(c, f, s.Channels[i].Kind, s.ILA)
			continue
		}
		for j := range c.H {
			c.H[j].H = s.Orders[j]
			c.H[j].RMS = rd.f32()
			c.H[j].PhaseDeg = rd.phase()
		}
		fillPct(c, f, s.Channels[i].Kind, s.IL(i))
	}
	var err error
	if r.Phases, err = readPhases(rd, b[0]); err != nil {
		return nil, err
	}
	np := len(r.Phases)
	if np > 0 || pres&hasTotal != 0 {
		t := &r.Total
		t.P, t.Q1, t.S, t.Se, t.Se1 = rd.f32(), rd.f32(), rd.f32(), rd.f32(), rd.f32()
		t.Ve, t.Ie, t.PF, t.DPF = rd.f32(), rd.f32(), rd.f32(), rd.f32()
		t.P1Pos, t.Q1Pos = nan(), nan()
		if b[0] >= 2 {
			t.P1Pos, t.Q1Pos = rd.f32(), rd.f32()
		}
	}
	for k, dst := range [2]*[]metrics.Seq{&r.SeqV, &r.SeqI} {
		if pres&(hasSeqV<<k) == 0 || rd.err != nil {
			continue
		}
		sq := make([]metrics.Seq, len(s.Orders))
		for j := range sq {
			if slimForm(b[0]) && j > 0 {
				sq[j] = metrics.Seq{H: s.Orders[j], Pos: nan(), Neg: nan(), Zero: nan()}
				continue
			}
			sq[j] = metrics.Seq{H: s.Orders[j], Pos: rd.f32(), Neg: rd.f32(), Zero: rd.f32()}
		}
		*dst = sq
	}
	r.UnbV = rd.f32()
	r.UnbI = rd.f32()
	if err := readCircuits(rd, r, s, b[0]); err != nil {
		return nil, err
	}
	if rd.err != nil {
		return nil, rd.err
	}
	if len(rd.b) != 0 {
		return nil, fmt.Errorf("%d bytes after record: %w", len(rd.b), ErrCorrupt)
	}
	return r, nil
}

// fillPct recomputes pct (of the channel's fundamental) and pct_il (of IL).
func fillPct(c *metrics.ChannelValues, f byte, k metrics.Kind, il float64) {
	h1 := c.H[0].RMS
	for j := range c.H {
		h := &c.H[j]
		h.Pct, h.PctIL = math.NaN(), math.NaN()
		if f&chPctNull == 0 && h1 > 0 {
			h.Pct = 100 * h.RMS / h1
		}
		if f&chPctILNull == 0 && k == metrics.Current && il > 0 {
			h.PctIL = 100 * h.RMS / il
		}
	}
}

func nan() float64 { return math.NaN() }

// storedF32 reads quantity q from a record of the given version: stored
// since q.Since, null in older records.
// appendPhases appends the phase count and each phase's letter and stored
// quantities (the bus's, or one circuit's).
func appendPhases(b []byte, ps []metrics.PhaseValues) []byte {
	b = append(b, byte(len(ps)))
	for i := range ps {
		p := &ps[i]
		b = append(b, p.Phase)
		for id := range quantity.NumPhase {
			if quantity.Phase(id).Out&quantity.Store != 0 {
				b = appendF32(b, *p.Field(id))
			}
		}
	}
	return b
}

// readPhases reads what appendPhases wrote in record version ver.
func readPhases(rd *reader, ver byte) ([]metrics.PhaseValues, error) {
	np := int(rd.u8())
	if np > 3 {
		return nil, fmt.Errorf("%d phases: %w", np, ErrCorrupt)
	}
	if rd.err != nil || np == 0 {
		return nil, nil
	}
	ps := make([]metrics.PhaseValues, np)
	for i := range ps {
		p := &ps[i]
		p.Phase = rd.u8()
		for id := range quantity.NumPhase {
			if q := quantity.Phase(id); q.Out&quantity.Store != 0 {
				*p.Field(id) = storedF32(rd, q, ver)
			}
		}
	}
	return ps, nil
}

func storedF32(rd *reader, q quantity.Q, version byte) float64 {
	if version < q.Since {
		return nan()
	}
	return rd.f32()
}

// storedScalars counts the stored per-channel and per-phase quantities of
// the current record version.
func storedScalars() (perChannel, perPhase int) {
	for _, q := range quantity.Channels() {
		if q.Out&quantity.Store != 0 && q.Since <= recordVersion {
			perChannel++
		}
	}
	for _, q := range quantity.Phases() {
		if q.Out&quantity.Store != 0 && q.Since <= recordVersion {
			perPhase++
		}
	}
	return perChannel, perPhase
}

// RecordBytes estimates the encoded size of one aggregate record for
// layout s (the current version, with the 10 s frequency, sequences when the wiring
// has them), plus bbolt's per-entry overhead: for sizing retention
// against MaxSizeMB.
func RecordBytes(s *metrics.Setup) int {
	nch, nord, nph := len(s.Channels), len(s.Orders), len(s.Pairs)
	n := 1 + 2 + 8 + 8 + 3 + 2 + 1 + 4 + 4
	perCh, perPh := storedScalars()
	n += nch * (1 + perCh*4 + nord*(4+2))
	n += 1 + nph*(1+perPh*4)
	if nph > 0 || s.HasTotal() {
		n += 11 * 4
	}
	if s.Wiring == metrics.Wye || s.Wiring == metrics.Delta {
		if s.HasSequence(metrics.Voltage) {
			n += nord * 3 * 4
		}
		if s.HasSequence(metrics.Current) {
			n += nord * 3 * 4
		}
	}
	n += 2 * 4
	for _, c := range s.Circuits {
		n += circuitBytes(c.Sub)
	}
	return n + 16 + leafElemOverhead
}
