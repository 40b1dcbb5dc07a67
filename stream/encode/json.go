package encode

import (
	"bufio"
	"fmt"
	"io"
	"strconv"

	"github.com/gridloupe/gridloupe/metrics"
	"github.com/gridloupe/gridloupe/metrics/quantity"
)

// AppendJSON appends r as one JSON object (no trailing newline) in the
// interface contract's schema and key order, and returns the extended
// buffer. Numbers are shortest round-trip float64 values; NaN (the null
// marker) and ±Inf print as null. Keys follow the presence rules of DESIGN
// "Interface contract": a key that does not apply is absent, an undefined
// value is null.
//
// r should match s (see CheckRecord); parts of r beyond what s describes,
// or missing from r, are skipped rather than guessed. AppendJSON does not
// allocate when dst has room.
func AppendJSON(dst []byte, s *metrics.Setup, r *metrics.Record) []byte {
	dst = append(dst, `{"interval":`...)
	dst = appendJSONString(dst, r.Interval.String())
	dst = append(dst, `,"start":"`...)
	dst = AppendTime(dst, r.Start)
	dst = append(dst, `","duration_s":`...)
	dst = appendJSONNum(dst, r.DurationS)
	dst = append(dst, `,"samples":`...)
	dst = strconv.AppendUint(dst, r.Samples, 10)
	dst = append(dst, `,"freq_hz":`...)
	dst = appendJSONNum(dst, r.FreqHz)
	if r.HasFreq10s {
		dst = append(dst, `,"freq_10s_hz":`...)
		dst = appendJSONNum(dst, r.Freq10sHz)
	}
	dst = append(dst, `,"flags":[`...)
	var nb [16]string
	for i, n := range r.Flags.AppendNames(nb[:0]) {
		if i > 0 {
			dst = append(dst, ',')
		}
		dst = appendJSONString(dst, n)
	}
	dst = append(dst, `],"channels":{`...)
	for i := range s.Channels {
		if i >= len(r.Channels) {
			break
		}
		if i > 0 {
			dst = append(dst, ',')
		}
		dst = appendJSONChannel(dst, s, i, &r.Channels[i])
	}
	dst = append(dst, '}')

	if n := min(len(s.Pairs), len(r.Phases)); n > 0 {
		dst = append(dst, `,"phases":{`...)
		for k := range n {
			if k > 0 {
				dst = append(dst, ',')
			}
			dst = append(dst, '"', s.Pairs[k].Phase, '"', ':')
			dst = appendJSONPhase(dst, &r.Phases[k])
		}
		dst = append(dst, '}')
	}
	if s.HasTotal() {
		dst = appendJSONTotal(dst, &r.Total, s.Wiring == metrics.Delta)
	}

	if len(r.SeqV) > 0 || len(r.SeqI) > 0 {
		dst = append(dst, `,"sequence":{`...)
		if len(r.SeqV) > 0 {
			dst = append(dst, `"voltage":`...)
			dst = appendJSONSeq(dst, r.SeqV, s.Wiring != metrics.Delta)
			if len(r.SeqI) > 0 {
				dst = append(dst, ',')
			}
		}
		if len(r.SeqI) > 0 {
			dst = append(dst, `"current":`...)
			dst = appendJSONSeq(dst, r.SeqI, true)
		}
		dst = append(dst, '}')
		if s.Wiring == metrics.Wye || s.Wiring == metrics.Delta {
			dst = append(dst, `,"unbalance":{`...)
			if len(r.SeqV) > 0 {
				dst = append(dst, `"voltage_pct":`...)
				dst = appendJSONNum(dst, r.UnbV)
				if len(r.SeqI) > 0 {
					dst = append(dst, ',')
				}
			}
			if len(r.SeqI) > 0 {
				dst = append(dst, `"current_pct":`...)
				dst = appendJSONNum(dst, r.UnbI)
			}
			dst = append(dst, '}')
		}
	}
	dst = appendJSONCircuits(dst, s, r)
	return append(dst, '}')
}

// hasTDD reports whether a channel carries tdd_* and pct_il: a current with
// IL configured.
func hasTDD(s *metrics.Setup, ch *metrics.Channel) bool {
	return ch.Kind == metrics.Current && (s.ILA > 0 || ch.ILA > 0)
}

func appendJSONChannel(dst []byte, s *metrics.Setup, ci int, v *metrics.ChannelValues) []byte {
	ch := &s.Channels[ci]
	tdd := hasTDD(s, ch)
	dst = appendJSONString(dst, ch.Name)
	dst = append(dst, ':')
	sep := byte('{')
	for id := range quantity.NumChannel {
		q := quantity.Channel(id)
		if q.Out&quantity.JSON == 0 || !s.Applies(q, ci) {
			continue
		}
		dst = appendJSONKeyNum(dst, sep, q.Name, *v.Field(id))
		sep = ','
	}
	dst = append(dst, `,"harmonics":[`...)
	for k := range min(len(s.Orders), len(v.H)) {
		h := &v.H[k]
		if k > 0 {
			dst = append(dst, ',')
		}
		dst = append(dst, `{"h":`...)
		dst = strconv.AppendInt(dst, int64(h.H), 10)
		dst = append(dst, `,"rms":`...)
		dst = appendJSONNum(dst, h.RMS)
		dst = append(dst, `,"pct":`...)
		dst = appendJSONNum(dst, h.Pct)
		if tdd {
			dst = append(dst, `,"pct_il":`...)
			dst = appendJSONNum(dst, h.PctIL)
		}
		dst = append(dst, `,"phase_deg":`...)
		dst = appendJSONNum(dst, h.PhaseDeg)
		dst = append(dst, '}')
	}
	return append(dst, "]}"...)
}

// appendJSONKeyNum appends sep, then "name":v.
func appendJSONKeyNum(dst []byte, sep byte, name string, v float64) []byte {
	dst = append(dst, sep, '"')
	dst = append(dst, name...)
	dst = append(dst, '"', ':')
	return appendJSONNum(dst, v)
}

func appendJSONPhase(dst []byte, p *metrics.PhaseValues) []byte {
	sep := byte('{')
	for id := range quantity.NumPhase {
		q := quantity.Phase(id)
		if q.Out&quantity.JSON == 0 {
			continue
		}
		dst = appendJSONKeyNum(dst, sep, q.Name, *p.Field(id))
		sep = ','
	}
	return append(dst, '}')
}

// appendJSONTotal appends the totals; delta has no s_va (no arithmetic
// sum without phase-to-neutral voltages).
func appendJSONTotal(dst []byte, t *metrics.TotalValues, delta bool) []byte {
	dst = append(dst, `,"total":`...)
	return appendJSONTotalBody(dst, t, delta)
}

// appendJSONTotalBody appends the totals object itself.
func appendJSONTotalBody(dst []byte, t *metrics.TotalValues, delta bool) []byte {
	dst = append(dst, `{"p_w":`...)
	dst = appendJSONNum(dst, t.P)
	dst = append(dst, `,"q_var":`...)
	dst = appendJSONNum(dst, t.Q1)
	if !delta {
		dst = append(dst, `,"s_va":`...)
		dst = appendJSONNum(dst, t.S)
	}
	dst = append(dst, `,"se_va":`...)
	dst = appendJSONNum(dst, t.Se)
	dst = append(dst, `,"se1_va":`...)
	dst = appendJSONNum(dst, t.Se1)
	dst = append(dst, `,"ve_v":`...)
	dst = appendJSONNum(dst, t.Ve)
	dst = append(dst, `,"ie_a":`...)
	dst = appendJSONNum(dst, t.Ie)
	dst = append(dst, `,"pf":`...)
	dst = appendJSONNum(dst, t.PF)
	dst = append(dst, `,"dpf":`...)
	dst = appendJSONNum(dst, t.DPF)
	return append(dst, '}')
}

// dominant names the largest symmetrical component, or "" when any of the
// three is undefined (metrics.Seq.Dominant would name "zero" for NaN input).
func dominant(q *metrics.Seq) string {
	if !finite(q.Pos) || !finite(q.Neg) || !finite(q.Zero) {
		return ""
	}
	return q.Dominant()
}

// appendJSONSeq appends sequence magnitudes; zero is left out for
// line-to-line voltages, which have no zero sequence.
func appendJSONSeq(dst []byte, seq []metrics.Seq, zero bool) []byte {
	dst = append(dst, '{')
	for k := range seq {
		q := &seq[k]
		if k > 0 {
			dst = append(dst, ',')
		}
		dst = append(dst, '"')
		dst = strconv.AppendInt(dst, int64(q.H), 10)
		dst = append(dst, `":{"pos":`...)
		dst = appendJSONNum(dst, q.Pos)
		dst = append(dst, `,"neg":`...)
		dst = appendJSONNum(dst, q.Neg)
		if zero {
			dst = append(dst, `,"zero":`...)
			dst = appendJSONNum(dst, q.Zero)
		}
		dst = append(dst, `,"dominant":`...)
		if d := dominant(q); d != "" {
			dst = append(dst, '"')
			dst = append(dst, d...)
			dst = append(dst, '"')
		} else {
			dst = append(dst, "null"...)
		}
		dst = append(dst, '}')
	}
	return append(dst, '}')
}

// CheckRecord reports, wrapping ErrShape, how r's slices differ from what s
// describes: one ChannelValues per channel, one Harmonic per order, one
// PhaseValues per pair, and sequences either absent or one per order.
func CheckRecord(s *metrics.Setup, r *metrics.Record) error {
	if len(r.Channels) != len(s.Channels) {
		return fmt.Errorf("%d channel values for %d channels: %w", len(r.Channels), len(s.Channels), ErrShape)
	}
	for i := range r.Channels {
		if n := len(r.Channels[i].H); n != len(s.Orders) {
			return fmt.Errorf("channel %q: %d harmonics for %d orders: %w", s.Channels[i].Name, n, len(s.Orders), ErrShape)
		}
	}
	if len(r.Phases) != len(s.Pairs) {
		return fmt.Errorf("%d phase values for %d phase pairs: %w", len(r.Phases), len(s.Pairs), ErrShape)
	}
	if n := len(r.SeqV); n != 0 && n != len(s.Orders) {
		return fmt.Errorf("%d voltage sequence values for %d orders: %w", n, len(s.Orders), ErrShape)
	}
	if n := len(r.SeqI); n != 0 && n != len(s.Orders) {
		return fmt.Errorf("%d current sequence values for %d orders: %w", n, len(s.Orders), ErrShape)
	}
	if len(s.Circuits) > 0 || len(r.Circuits) > 0 {
		return checkCircuits(s, r)
	}
	return nil
}

// JSONL writes one JSON object per line (JSON Lines), buffered: call Flush
// when done. After the first buffer grows to a record's size, Write does not
// allocate. A JSONL is not safe for concurrent use.
type JSONL struct {
	w   *bufio.Writer
	s   *metrics.Setup
	buf []byte
}

// NewJSONL returns a JSONL writer of records described by s to w.
func NewJSONL(w io.Writer, s *metrics.Setup) *JSONL {
	return &JSONL{w: bufio.NewWriterSize(w, 32<<10), s: s, buf: make([]byte, 0, 4096)}
}

// Write encodes r as one line. A record that does not match the setup is
// rejected with an error wrapping ErrShape and nothing is written.
func (j *JSONL) Write(r *metrics.Record) error {
	if err := CheckRecord(j.s, r); err != nil {
		return fmt.Errorf("encode: jsonl record at %s: %w", FormatTime(r.Start), err)
	}
	j.buf = AppendJSON(j.buf[:0], j.s, r)
	j.buf = append(j.buf, '\n')
	if _, err := j.w.Write(j.buf); err != nil {
		return fmt.Errorf("encode: write jsonl: %w", err)
	}
	return nil
}

// Flush writes any buffered output to the underlying writer.
func (j *JSONL) Flush() error {
	if err := j.w.Flush(); err != nil {
		return fmt.Errorf("encode: flush jsonl: %w", err)
	}
	return nil
}
