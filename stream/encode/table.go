package encode

import (
	"bufio"
	"fmt"
	"io"
	"strconv"

	"github.com/gridloupe/gridloupe/metrics"
	"github.com/gridloupe/gridloupe/metrics/quantity"
)

// Caution is the safety line every human-readable report carries.
const Caution = "Measurements only: installation by qualified personnel under local electrical codes; " +
	"rated sensors (CAT III or better); never open-circuit a loaded CT secondary; not a protective device."

// nullCell is how the table shows an undefined value. ASCII, so that column
// widths counted in bytes stay aligned.
const nullCell = "-"

// TableOptions adjusts the table.
type TableOptions struct {
	Title       string     // site title for the banner; "" = none
	HeaderEvery int        // wide table: repeat the column header every n rows; 0 = once
	Reference   *Reference // IEEE 519 limits beside THD-V and TDD (Blocks); nil = none
}

// colSrc says where a table column takes its value from.
type colSrc uint8

const (
	srcStart colSrc = iota
	srcInterval
	srcFreq
	srcRMS    // channel RMS
	srcTHD    // channel THD-F
	srcTDD    // channel TDD
	srcPF     // phase PF
	srcDPF    // phase DPF
	srcPkW    // total P, kW
	srcQkvar  // total Q1, kvar
	srcTotPF  // total PF
	srcCircP  // circuit idx total P, kW
	srcCircPF // circuit idx total PF
	srcQty    // a per-channel quantity of the table marked quantity.Wide
	srcFlags
)

type column struct {
	head  string
	width int
	src   colSrc
	idx   int         // channel or phase index
	qid   quantity.ID // srcQty: the quantity
	dec   int         // decimals
	left  bool
}

// Table prints records as fixed-width rows for people at a terminal: a
// banner with the title and the safety caution, a column header, then one
// row per record with values rounded for reading (start to the millisecond,
// frequency to 3 decimals, volts to 0.1 V, amperes to 0.01 A, percentages to
// 0.01, power factors to 0.001, powers to 0.01 kW/kvar). Undefined values
// show as "-". Output is buffered: call Flush when done. A Table is not safe
// for concurrent use.
type Table struct {
	w       *bufio.Writer
	s       *metrics.Setup
	opts    TableOptions
	cols    []column
	rows    int
	started bool
	buf     []byte
}

// NewTable returns a table writer of records described by s to w.
func NewTable(w io.Writer, s *metrics.Setup, opts TableOptions) *Table {
	t := &Table{w: bufio.NewWriterSize(w, 16<<10), s: s, opts: opts, buf: make([]byte, 0, 1024)}
	add := func(c column) {
		c.width = max(c.width, len(c.head))
		t.cols = append(t.cols, c)
	}
	add(column{head: "start (UTC)", width: len(tableTimeLayout), src: srcStart, left: true})
	add(column{head: "intvl", width: 5, src: srcInterval, left: true})
	add(column{head: "f Hz", width: 6, src: srcFreq, dec: 3})
	for i := range s.Channels {
		ch := &s.Channels[i]
		name := printable(ch.Name)
		switch ch.Kind {
		case metrics.Voltage:
			add(column{head: name + " V", width: 7, src: srcRMS, idx: i, dec: 1})
			add(column{head: name + " THD%", width: 6, src: srcTHD, idx: i, dec: 2})
		case metrics.Current:
			add(column{head: name + " A", width: 7, src: srcRMS, idx: i, dec: 2})
			add(column{head: name + " THD%", width: 6, src: srcTHD, idx: i, dec: 2})
			if hasTDD(s, ch) {
				add(column{head: name + " TDD%", width: 6, src: srcTDD, idx: i, dec: 2})
			}
		}
		for id := range quantity.NumChannel {
			if q := quantity.Channel(id); q.Out&quantity.Wide != 0 && s.Applies(q, i) {
				add(column{head: name + " " + q.Short, width: 6, src: srcQty, idx: i, qid: id, dec: 2})
			}
		}
	}
	for k, p := range s.Pairs {
		ph := string(p.Phase)
		add(column{head: "PF " + ph, width: 6, src: srcPF, idx: k, dec: 3})
		add(column{head: "DPF " + ph, width: 6, src: srcDPF, idx: k, dec: 3})
	}
	if s.HasTotal() {
		add(column{head: "P kW", width: 8, src: srcPkW, dec: 2})
		add(column{head: "Q kvar", width: 8, src: srcQkvar, dec: 2})
		add(column{head: "PF", width: 6, src: srcTotPF, dec: 3})
	}
	for k, c := range s.Circuits {
		if c.Sub.HasTotal() {
			name := printable(c.Name)
			add(column{head: name + " kW", width: 8, src: srcCircP, idx: k, dec: 2})
			add(column{head: name + " PF", width: 6, src: srcCircPF, idx: k, dec: 3})
		}
	}
	add(column{head: "flags", src: srcFlags, left: true})
	return t
}

// printable replaces control bytes in a name so that a config value cannot
// move the terminal's cursor.
func printable(s string) string {
	b := []byte(s)
	for i, c := range b {
		if c < 0x20 || c == 0x7f {
			b[i] = '?'
		}
	}
	return string(b)
}

const colGap = "  "

// pad appends cell padded to width, right-aligned unless left.
func pad(b []byte, cell []byte, width int, left bool) []byte {
	n := width - len(cell)
	if left {
		b = append(b, cell...)
	}
	for ; n > 0; n-- {
		b = append(b, ' ')
	}
	if !left {
		b = append(b, cell...)
	}
	return b
}

func (t *Table) appendHeader(b []byte) []byte {
	for i, c := range t.cols {
		if i > 0 {
			b = append(b, colGap...)
		}
		if c.src == srcFlags {
			b = append(b, c.head...)
			continue
		}
		b = pad(b, []byte(c.head), c.width, c.left)
	}
	return append(b, '\n')
}

func (t *Table) banner() error {
	t.started = true
	b := append(t.buf[:0], "gridloupe"...)
	if t.opts.Title != "" {
		b = append(b, ": "...)
		b = append(b, printable(t.opts.Title)...)
	}
	b = append(b, "\nCAUTION: "...)
	b = append(b, Caution...)
	b = append(b, "\nTHD% is thd_pct and TDD% tdd_pct (every component but DC and the fundamental); IEEE 519 compares the orders 2-50 values (--format table)."...)
	b = append(b, '\n', '\n')
	t.buf = t.appendHeader(b)
	if _, err := t.w.Write(t.buf); err != nil {
		return fmt.Errorf("encode: write table header: %w", err)
	}
	return nil
}

// Write prints the banner and header before the first record, then r as
// one row. A record that does not match the setup is rejected with an error
// wrapping ErrShape and nothing is written.
func (t *Table) Write(r *metrics.Record) error {
	if err := CheckRecord(t.s, r); err != nil {
		return fmt.Errorf("encode: table record at %s: %w", FormatTime(r.Start), err)
	}
	if !t.started {
		if err := t.banner(); err != nil {
			return err
		}
	} else if t.opts.HeaderEvery > 0 && t.rows%t.opts.HeaderEvery == 0 {
		t.buf = t.appendHeader(t.buf[:0])
		if _, err := t.w.Write(t.buf); err != nil {
			return fmt.Errorf("encode: write table header: %w", err)
		}
	}
	t.rows++
	t.buf = t.appendRow(t.buf[:0], r)
	if _, err := t.w.Write(t.buf); err != nil {
		return fmt.Errorf("encode: write table: %w", err)
	}
	return nil
}

// Flush prints the banner if no record has come yet (a report always
// carries the caution), then any buffered output.
func (t *Table) Flush() error {
	if !t.started {
		if err := t.banner(); err != nil {
			return err
		}
	}
	if err := t.w.Flush(); err != nil {
		return fmt.Errorf("encode: flush table: %w", err)
	}
	return nil
}

func (t *Table) value(c *column, r *metrics.Record) float64 {
	switch c.src {
	case srcFreq:
		return r.FreqHz
	case srcRMS:
		return r.Channels[c.idx].RMS
	case srcTHD:
		return r.Channels[c.idx].THDPct
	case srcTDD:
		return r.Channels[c.idx].TDDPct
	case srcQty:
		return *r.Channels[c.idx].Field(c.qid)
	case srcPF:
		return r.Phases[c.idx].PF
	case srcDPF:
		return r.Phases[c.idx].DPF
	case srcPkW:
		return r.Total.P / 1000
	case srcQkvar:
		return r.Total.Q1 / 1000
	case srcTotPF:
		return r.Total.PF
	case srcCircP, srcCircPF:
		if c.idx >= len(r.Circuits) || r.Circuits[c.idx].Rec == nil {
			return metrics.Null()
		}
		if t := &r.Circuits[c.idx].Rec.Total; c.src == srcCircP {
			return t.P / 1000
		} else {
			return t.PF
		}
	}
	return metrics.Null()
}

func (t *Table) appendRow(b []byte, r *metrics.Record) []byte {
	var cb [64]byte
	for i := range t.cols {
		c := &t.cols[i]
		if i > 0 {
			b = append(b, colGap...)
		}
		cell := cb[:0]
		switch c.src {
		case srcStart:
			cell = r.Start.UTC().AppendFormat(cell, tableTimeLayout)
		case srcInterval:
			cell = append(cell, r.Interval.String()...)
		case srcFlags:
			var nb [16]string
			for k, n := range r.Flags.AppendNames(nb[:0]) {
				if k > 0 {
					b = append(b, ',')
				}
				b = append(b, n...)
			}
			continue
		default:
			cell = appendRounded(cell, t.value(c, r), c.dec)
		}
		b = pad(b, cell, c.width, c.left)
	}
	// Drop the trailing gap left when there are no flags.
	for len(b) > 0 && b[len(b)-1] == ' ' {
		b = b[:len(b)-1]
	}
	return append(b, '\n')
}

// appendRounded appends v rounded to dec decimals (strconv's correctly
// rounded decimal conversion), or "-" when v is undefined. A value that
// rounds to zero prints without a minus sign.
func appendRounded(b []byte, v float64, dec int) []byte {
	if !finite(v) {
		return append(b, nullCell...)
	}
	n := len(b)
	b = strconv.AppendFloat(b, v, 'f', dec, 64)
	if b[n] == '-' {
		neg0 := true
		for _, c := range b[n+1:] {
			if c != '0' && c != '.' {
				neg0 = false
				break
			}
		}
		if neg0 {
			b = append(b[:n], b[n+1:]...)
		}
	}
	return b
}
