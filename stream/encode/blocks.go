package encode

import (
	"bufio"
	"fmt"
	"io"
	"strings"

	"github.com/gridloupe/gridloupe/metrics"
)

// Reference is the IEEE 519 reference a table prints beside voltage THD
// and current TDD: the limits of the site's rows (metrics/limits). A zero
// limit means "not known" (no il_a for TDD), and nothing is compared.
type Reference struct {
	Edition string  `json:"edition"`            // e.g. IEEE 519-2014
	BusV    float64 `json:"bus_v"`              // V, the bus voltage that picks the Table 1 row
	VTHDPct float64 `json:"vthd_pct"`           // Table 1 THD limit, %
	IRow    string  `json:"irow,omitempty"`     // Table 2 row label (ISC/IL), e.g. 20<50
	TDDPct  float64 `json:"tdd_pct,omitempty"`  // Table 2 TDD limit, %
	IRowWhy string  `json:"irow_why,omitempty"` // how the row was chosen, e.g. "ISC/IL 38.1"
}

// aboveMark follows a value at or above its reference limit.
const aboveMark = '!'

// Blocks prints records for people on an 80–120 column terminal: one block
// per record (a line with the interval, start, duration, frequency and
// flags), then one row per phase (V, I, THD-V, TDD, PF, DPF, P, Q1), a row
// per channel without a partner (a neutral current) and the three-phase
// total. THD-V is thd_h50_pct of the phase voltage and TDD is tdd_h50_pct
// of the phase current (orders 2–50, what IEEE 519 limits); without il_a
// the current column is THD-I, thd_h50_pct of the current; with a list of
// harmonics (no _h50 values) thd_pct and tdd_pct are shown and nothing is
// compared. With a Reference the limits head their columns and a value at
// or above its limit is marked '!'. The banner says which values are shown. Output is buffered: call Flush. Not safe for
// concurrent use.
type Blocks struct {
	w       *bufio.Writer
	s       *metrics.Setup
	opts    TableOptions
	tdd     bool // the current column is TDD (il_a known), else THD-I
	h50     bool // orders 2-50 computed: the _h50 values, compared with the reference
	spare   []int
	started bool
	buf     []byte
}

// NewBlocks returns a block writer of records described by s to w.
func NewBlocks(w io.Writer, s *metrics.Setup, opts TableOptions) *Blocks {
	b := &Blocks{w: bufio.NewWriterSize(w, 16<<10), s: s, opts: opts, tdd: s.ILA > 0, h50: s.AllOrders, buf: make([]byte, 0, 2048)}
	paired := make([]bool, len(s.Channels))
	for _, p := range s.Pairs {
		paired[p.V], paired[p.I] = true, true
	}
	for _, c := range s.Circuits {
		for _, p := range c.Sub.Pairs {
			paired[c.Map[p.I]] = true // the bus voltages keep their own rows
		}
	}
	for i := range s.Channels {
		if !paired[i] {
			b.spare = append(b.spare, i)
		}
	}
	return b
}

// Column widths of a block row (the row label is 7 wide).
const (
	bwLabel = 7
	bwV     = 8
	bwI     = 8
	bwPct   = 11
	bwPF    = 7
	bwP     = 9
)

func (b *Blocks) limits() (vthd, idist float64) {
	if b.opts.Reference == nil || !b.h50 {
		return 0, 0
	}
	if !b.tdd {
		return b.opts.Reference.VTHDPct, 0
	}
	return b.opts.Reference.VTHDPct, b.opts.Reference.TDDPct
}

func (b *Blocks) banner() error {
	b.started = true
	buf := append(b.buf[:0], "gridloupe"...)
	if b.opts.Title != "" {
		buf = append(buf, ": "...)
		buf = append(buf, printable(b.opts.Title)...)
	}
	buf = append(buf, '\n')
	buf = appendWrapped(buf, "CAUTION: "+Caution)
	switch {
	case b.h50 && b.tdd:
		buf = appendWrapped(buf, "THD-V is thd_h50_pct of the phase voltage, TDD tdd_h50_pct of the phase current (orders 2-50, % of IL).")
	case b.h50:
		buf = appendWrapped(buf, "THD-V and THD-I are thd_h50_pct (orders 2-50, % of the fundamental).")
	case b.tdd:
		buf = appendWrapped(buf, "THD-V is thd_pct, TDD tdd_pct (every component but DC and the fundamental): harmonics is a list, so the orders 2-50 values that IEEE 519 limits are not computed and nothing is compared.")
	default:
		buf = appendWrapped(buf, "THD-V and THD-I are thd_pct (every component but DC and the fundamental): harmonics is a list, so the orders 2-50 values that IEEE 519 limits are not computed and nothing is compared.")
	}
	if ref := b.opts.Reference; ref != nil && b.h50 {
		text := fmt.Sprintf("%s reference, binding at the PCC only (inside a cabinet a reference): THD-V below %g %% (Table 1, bus %.0f V)",
			ref.Edition, ref.VTHDPct, ref.BusV)
		if ref.TDDPct > 0 && b.tdd {
			text += fmt.Sprintf(", TDD below %g %% (Table 2 row %s, %s)", ref.TDDPct, ref.IRow, ref.IRowWhy)
		}
		buf = appendWrapped(buf, text+"; "+string(aboveMark)+" marks a value at or above its limit.")
	}
	buf = append(buf, '\n')
	b.buf = buf
	if _, err := b.w.Write(b.buf); err != nil {
		return fmt.Errorf("encode: write table header: %w", err)
	}
	return nil
}

func (b *Blocks) header(buf []byte) []byte {
	vthd, idist := b.limits()
	cur := "THD-I %"
	if b.tdd {
		cur = "TDD %"
	}
	buf = pad(buf, []byte("phase"), bwLabel, true)
	buf = pad(buf, []byte("V"), bwV, false)
	buf = pad(buf, []byte("A"), bwI, false)
	buf = pad(buf, limHead("THD-V %", vthd), bwPct, false)
	buf = pad(buf, limHead(cur, idist), bwPct, false)
	buf = pad(buf, []byte("PF"), bwPF, false)
	buf = pad(buf, []byte("DPF"), bwPF, false)
	buf = pad(buf, []byte("P kW"), bwP, false)
	buf = pad(buf, []byte("Q1 kvar"), bwP, false)
	return append(buf, '\n')
}

// limHead is a column head with its limit: "TDD %<8".
func limHead(head string, lim float64) []byte {
	if lim > 0 {
		return fmt.Appendf(nil, "%s<%g", head, lim)
	}
	return []byte(head)
}

// Write prints r as one block. A record that does not match the setup is
// rejected with an error wrapping ErrShape and nothing is written.
func (b *Blocks) Write(r *metrics.Record) error {
	if err := CheckRecord(b.s, r); err != nil {
		return fmt.Errorf("encode: table record at %s: %w", FormatTime(r.Start), err)
	}
	if !b.started {
		if err := b.banner(); err != nil {
			return err
		}
	}
	buf := b.buf[:0]
	buf = append(buf, r.Interval.String()...)
	buf = append(buf, ' ')
	buf = r.Start.UTC().AppendFormat(buf, tableTimeLayout)
	buf = append(buf, "  "...)
	buf = appendRounded(buf, r.DurationS, 3)
	buf = append(buf, " s  "...)
	buf = appendRounded(buf, r.FreqHz, 3)
	buf = append(buf, " Hz"...)
	var nb [16]string
	for k, n := range r.Flags.AppendNames(nb[:0]) {
		if k == 0 {
			buf = append(buf, "  flags: "...)
		} else {
			buf = append(buf, ',')
		}
		buf = append(buf, n...)
	}
	buf = append(buf, '\n')
	buf = b.header(buf)
	vthd, idist := b.limits()
	for k, p := range b.s.Pairs {
		v, i := &r.Channels[p.V], &r.Channels[p.I]
		ph := &r.Phases[k]
		buf = pad(buf, []byte{p.Phase}, bwLabel, true)
		buf = b.rowValues(buf, v.RMS, i.RMS, b.thd(v), b.current(i), vthd, idist, ph.PF, ph.DPF, ph.P, ph.Q1)
	}
	for _, c := range b.spare {
		ch, v := &b.s.Channels[c], &r.Channels[c]
		buf = pad(buf, []byte(printable(ch.Name)), bwLabel, true)
		nul := metrics.Null()
		if ch.Kind == metrics.Voltage {
			buf = b.rowValues(buf, v.RMS, nul, b.thd(v), nul, vthd, 0, nul, nul, nul, nul)
		} else {
			// a neutral's distortion has no IEEE 519 limit: no mark
			buf = b.rowValues(buf, nul, v.RMS, nul, b.current(v), 0, 0, nul, nul, nul, nul)
		}
	}
	buf = b.circuitRows(buf, r, vthd, idist)
	if b.s.Wiring != metrics.SinglePhase && len(b.s.Circuits) == 0 { // single-phase: the total is the phase
		t := &r.Total
		buf = pad(buf, []byte("total"), bwLabel, true)
		nul := metrics.Null()
		buf = b.rowValues(buf, t.Ve, t.Ie, nul, nul, 0, 0, t.PF, t.DPF, t.P, t.Q1)
	}
	buf = append(buf, '\n')
	b.buf = buf
	if _, err := b.w.Write(buf); err != nil {
		return fmt.Errorf("encode: write table: %w", err)
	}
	return nil
}

// current is the current column's value of channel values v.
func (b *Blocks) current(v *metrics.ChannelValues) float64 {
	switch {
	case b.tdd && b.h50:
		return v.TDDH50Pct
	case b.tdd:
		return v.TDDPct
	}
	return b.thd(v)
}

// thd is the THD shown of channel values v.
func (b *Blocks) thd(v *metrics.ChannelValues) float64 {
	if b.h50 {
		return v.THDH50Pct
	}
	return v.THDPct
}

func (b *Blocks) rowValues(buf []byte, vr, ir, thdv, idist, vlim, ilim, pf, dpf, p, q float64) []byte {
	var cb [40]byte
	buf = pad(buf, appendRounded(cb[:0], vr, 1), bwV, false)
	buf = pad(buf, appendRounded(cb[:0], ir, 2), bwI, false)
	buf = pad(buf, appendMarked(cb[:0], thdv, vlim), bwPct, false)
	buf = pad(buf, appendMarked(cb[:0], idist, ilim), bwPct, false)
	buf = pad(buf, appendRounded(cb[:0], pf, 3), bwPF, false)
	buf = pad(buf, appendRounded(cb[:0], dpf, 3), bwPF, false)
	buf = pad(buf, appendRounded(cb[:0], p/1000, 2), bwP, false)
	buf = pad(buf, appendRounded(cb[:0], q/1000, 2), bwP, false)
	for len(buf) > 0 && buf[len(buf)-1] == ' ' {
		buf = buf[:len(buf)-1]
	}
	return append(buf, '\n')
}

// appendMarked appends v to 2 decimals, followed by aboveMark when a limit
// is known and v is at or above it, else by a space (so digits align).
func appendMarked(b []byte, v, lim float64) []byte {
	b = appendRounded(b, v, 2)
	if lim > 0 && finite(v) && v >= lim {
		return append(b, aboveMark)
	}
	return append(b, ' ')
}

// Flush prints the banner if no record has come yet (a report always
// carries the caution), then any buffered output.
func (b *Blocks) Flush() error {
	if !b.started {
		if err := b.banner(); err != nil {
			return err
		}
	}
	if err := b.w.Flush(); err != nil {
		return fmt.Errorf("encode: flush table: %w", err)
	}
	return nil
}

// wrapWidth is where banner text wraps: an 80-column terminal.
const wrapWidth = 80

// appendWrapped appends text wrapped at wrapWidth on spaces, continuation
// lines indented by two spaces, and a final line break.
func appendWrapped(b []byte, text string) []byte {
	col := 0
	for len(text) > 0 {
		word := text
		rest := ""
		if i := strings.IndexByte(text, ' '); i >= 0 {
			word, rest = text[:i], text[i+1:]
		}
		if col > 0 && col+1+len(word) > wrapWidth {
			b = append(b, "\n  "...)
			col = 2
		} else if col > 0 {
			b = append(b, ' ')
			col++
		}
		b = append(b, word...)
		col += len(word)
		text = rest
	}
	return append(b, '\n')
}
