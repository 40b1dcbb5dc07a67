package encode

import (
	"bufio"
	"fmt"
	"io"
	"strconv"
	"strings"

	"github.com/gridloupe/gridloupe/metrics"
	"github.com/gridloupe/gridloupe/metrics/quantity"
)

// CSV writes one header row of flattened key names, then one row per
// record (RFC 4180 quoting, "\n" line ends). Presence rules are those of
// AppendJSON, decided once from the Setup, so every row has the header's
// column count: an undefined value is an empty cell, flags are joined with
// "|". Output is buffered: call Flush when done (it writes the header even
// when no record came). A CSV is not safe for concurrent use.
type CSV struct {
	w          *bufio.Writer
	s          *metrics.Setup
	seqV, seqI bool // sequence columns for voltages, currents
	unb        bool // unbalance columns
	started    bool // header written
	cols       int  // columns per row
	buf        []byte
}

// NewCSV returns a CSV writer of records described by s to w. Sequence and
// unbalance columns exist for a wye setup with all three phase voltages
// (currents) configured, which is when metrics fills Record.SeqV (SeqI).
func NewCSV(w io.Writer, s *metrics.Setup) *CSV {
	c := &CSV{w: bufio.NewWriterSize(w, 32<<10), s: s, buf: make([]byte, 0, 4096)}
	if s.Wiring == metrics.Wye || s.Wiring == metrics.Delta {
		c.seqV = s.HasSequence(metrics.Voltage)
		c.seqI = s.HasSequence(metrics.Current)
		c.unb = c.seqV || c.seqI
	}
	return c
}

// Header returns the column names in order, unquoted.
func (c *CSV) Header() []string {
	s := c.s
	h := []string{"interval", "start", "duration_s", "samples", "freq_hz", "freq_10s_hz", "flags"}
	for i := range s.Channels {
		ch := &s.Channels[i]
		p := ch.Name + "."
		for id := range quantity.NumChannel {
			if q := quantity.Channel(id); q.Out&quantity.CSV != 0 && s.Applies(q, i) {
				h = append(h, p+q.Name)
			}
		}
		tdd := hasTDD(s, ch)
		for _, o := range s.Orders {
			ph := p + "h" + strconv.Itoa(o) + "."
			h = append(h, ph+"rms", ph+"pct")
			if tdd {
				h = append(h, ph+"pct_il")
			}
			h = append(h, ph+"phase_deg")
		}
	}
	for _, pr := range s.Pairs {
		p := "phase." + string(pr.Phase) + "."
		for _, k := range phaseKeys {
			h = append(h, p+k)
		}
	}
	if s.HasTotal() {
		for _, k := range totalKeys {
			if k == "s_va" && s.Wiring == metrics.Delta {
				continue // no arithmetic sum without phase-to-neutral voltages
			}
			h = append(h, "total."+k)
		}
	}
	for side, on := range [2]bool{c.seqV, c.seqI} {
		if !on {
			continue
		}
		for _, o := range s.Orders {
			p := "sequence." + seqSides[side] + "." + strconv.Itoa(o) + "."
			h = append(h, p+"pos", p+"neg")
			if side == 1 || s.Wiring != metrics.Delta {
				h = append(h, p+"zero") // line-to-line voltages have none
			}
			h = append(h, p+"dominant")
		}
	}
	if c.seqV {
		h = append(h, "unbalance.voltage_pct")
	}
	if c.seqI {
		h = append(h, "unbalance.current_pct")
	}
	return csvCircuitHeader(h, s)
}

var (
	// phaseKeys: the per-phase CSV keys, from metrics/quantity's table (read-only).
	phaseKeys = phaseCSVKeys()
	totalKeys = [...]string{"p_w", "q_var", "s_va", "se_va", "se1_va", "ve_v", "ie_a", "pf", "dpf"}
	seqSides  = [2]string{"voltage", "current"}
)

func (c *CSV) writeHeader() error {
	c.started = true
	h := c.Header()
	c.cols = len(h)
	b := c.buf[:0]
	for i, name := range h {
		if i > 0 {
			b = append(b, ',')
		}
		b = appendCSVField(b, name)
	}
	c.buf = append(b, '\n')
	if _, err := c.w.Write(c.buf); err != nil {
		return fmt.Errorf("encode: write csv header: %w", err)
	}
	return nil
}

// Write writes the header before the first record, then r as one row. A
// record that does not match the setup (or the sequence columns chosen in
// NewCSV) is rejected with an error wrapping ErrShape and nothing is written.
func (c *CSV) Write(r *metrics.Record) error {
	err := CheckRecord(c.s, r)
	if err == nil && (len(r.SeqV) > 0) != c.seqV {
		err = fmt.Errorf("voltage sequence present %t, columns %t: %w", len(r.SeqV) > 0, c.seqV, ErrShape)
	}
	if err == nil && (len(r.SeqI) > 0) != c.seqI {
		err = fmt.Errorf("current sequence present %t, columns %t: %w", len(r.SeqI) > 0, c.seqI, ErrShape)
	}
	if err != nil {
		return fmt.Errorf("encode: csv record at %s: %w", FormatTime(r.Start), err)
	}
	if !c.started {
		if err := c.writeHeader(); err != nil {
			return err
		}
	}
	c.buf = c.appendRow(c.buf[:0], r)
	if _, err := c.w.Write(c.buf); err != nil {
		return fmt.Errorf("encode: write csv: %w", err)
	}
	return nil
}

// Flush writes the header if no record has come yet, then any buffered
// output.
func (c *CSV) Flush() error {
	if !c.started {
		if err := c.writeHeader(); err != nil {
			return err
		}
	}
	if err := c.w.Flush(); err != nil {
		return fmt.Errorf("encode: flush csv: %w", err)
	}
	return nil
}

// cell appends a separator and v, or an empty cell for NaN and ±Inf.
func cell(b []byte, v float64) []byte {
	b = append(b, ',')
	if finite(v) {
		b = appendNum(b, v)
	}
	return b
}

func (c *CSV) appendRow(b []byte, r *metrics.Record) []byte {
	s := c.s
	b = append(b, r.Interval.String()...)
	b = append(b, ',')
	b = AppendTime(b, r.Start)
	b = cell(b, r.DurationS)
	b = append(b, ',')
	b = strconv.AppendUint(b, r.Samples, 10)
	b = cell(b, r.FreqHz)
	if r.HasFreq10s {
		b = cell(b, r.Freq10sHz)
	} else {
		b = append(b, ',')
	}
	b = append(b, ',')
	var nb [16]string
	for i, n := range r.Flags.AppendNames(nb[:0]) {
		if i > 0 {
			b = append(b, '|')
		}
		b = append(b, n...)
	}
	for i := range s.Channels {
		ch, v := &s.Channels[i], &r.Channels[i]
		tdd := hasTDD(s, ch)
		for id := range quantity.NumChannel {
			if q := quantity.Channel(id); q.Out&quantity.CSV != 0 && s.Applies(q, i) {
				b = cell(b, *v.Field(id))
			}
		}
		for k := range v.H {
			h := &v.H[k]
			b = cell(b, h.RMS)
			b = cell(b, h.Pct)
			if tdd {
				b = cell(b, h.PctIL)
			}
			b = cell(b, h.PhaseDeg)
		}
	}
	b = appendCSVPhases(b, r)
	delta := s.Wiring == metrics.Delta
	if s.HasTotal() {
		t := &r.Total
		for i, v := range [...]float64{t.P, t.Q1, t.S, t.Se, t.Se1, t.Ve, t.Ie, t.PF, t.DPF} {
			if i == 2 && delta {
				continue // s_va, as in Header
			}
			b = cell(b, v)
		}
	}
	for side, seq := range [2][]metrics.Seq{r.SeqV, r.SeqI} {
		for k := range seq {
			q := &seq[k]
			b = cell(b, q.Pos)
			b = cell(b, q.Neg)
			if side == 1 || !delta {
				b = cell(b, q.Zero)
			}
			b = append(b, ',')
			b = append(b, dominant(q)...)
		}
	}
	if c.seqV {
		b = cell(b, r.UnbV)
	}
	if c.seqI {
		b = cell(b, r.UnbI)
	}
	b = appendCSVCircuits(b, s, r)
	return append(b, '\n')
}

// appendCSVField appends f, quoted as RFC 4180 asks when it holds a comma,
// quote or line break (or starts with a space, as encoding/csv also quotes).
func appendCSVField(b []byte, f string) []byte {
	if f == "" || (!strings.ContainsAny(f, ",\"\r\n") && f[0] != ' ' && f[0] != '\t') {
		return append(b, f...)
	}
	b = append(b, '"')
	for i := 0; i < len(f); i++ {
		if f[i] == '"' {
			b = append(b, '"')
		}
		b = append(b, f[i])
	}
	return append(b, '"')
}

// phaseCSVKeys lists the per-phase quantities the CSV writer prints.
func phaseCSVKeys() []string {
	var out []string
	for _, q := range quantity.Phases() {
		if q.Out&quantity.CSV != 0 {
			out = append(out, q.Name)
		}
	}
	return out
}

// appendCSVPhases appends r's phase cells in the quantity table's order
// (the bus's, or one circuit's).
func appendCSVPhases(b []byte, r *metrics.Record) []byte {
	for k := range r.Phases {
		p := &r.Phases[k]
		for id := range quantity.NumPhase {
			if quantity.Phase(id).Out&quantity.CSV != 0 {
				b = cell(b, *p.Field(id))
			}
		}
	}
	return b
}
