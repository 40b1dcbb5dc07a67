package encode

import (
	"bytes"
	"math"
	"math/big"
	"strings"
	"testing"

	"github.com/gridloupe/gridloupe/metrics"
)

func tableLines(tb testing.TB, s *metrics.Setup, opts TableOptions, recs ...*metrics.Record) []string {
	tb.Helper()
	var buf bytes.Buffer
	w := NewTable(&buf, s, opts)
	for _, r := range recs {
		if err := w.Write(r); err != nil {
			tb.Fatal(err)
		}
	}
	if err := w.Flush(); err != nil {
		tb.Fatal(err)
	}
	return strings.Split(strings.TrimSuffix(buf.String(), "\n"), "\n")
}

// TestTableBanner checks the title and the caution, once (src: DESIGN
// Safety: any report the tool produces carries the cautions).
func TestTableBanner(t *testing.T) {
	t.Parallel()
	s := buildSetup(t, specWyeSub)
	const title = "North Weir pumping station, cabinet DC-2"
	r := newRecord(s, seqFloats())
	lines := tableLines(t, s, TableOptions{Title: title}, r, r, r)
	if lines[0] != "gridloupe: "+title {
		t.Errorf("first line %q, want the title banner", lines[0])
	}
	all := strings.Join(lines, "\n")
	if n := strings.Count(all, Caution); n != 1 {
		t.Errorf("caution appears %d times, want once", n)
	}
	for _, must := range []string{"qualified personnel", "local electrical codes", "CAT III", "never open-circuit a loaded CT secondary", "not a protective device"} {
		if !strings.Contains(lines[1], must) {
			t.Errorf("caution line lacks %q (src: common rules, Safety)", must)
		}
	}
	if !strings.Contains(lines[2], "thd_pct") {
		t.Errorf("legend line %q does not say which THD is shown", lines[2])
	}
	if got := len(lines); got != 4+1+3 {
		t.Errorf("%d lines, want banner(3) + blank + header + 3 rows", got)
	}
	// No record at all: the caution still comes out.
	lines = tableLines(t, s, TableOptions{})
	if lines[0] != "gridloupe" || !strings.Contains(strings.Join(lines, "\n"), Caution) {
		t.Errorf("empty table %q lacks banner or caution", lines)
	}
}

// exactRound rounds v to dec decimals from its exact binary value with
// math/big (round half to even on the exact value, which is never a tie
// for a float64 with more than dec+… bits); an independent check of strconv.
func exactRound(v float64, dec int) string {
	return new(big.Float).SetPrec(0).SetFloat64(v).Text('f', dec)
}

// TestTableRounding checks the rounded cells of one row.
func TestTableRounding(t *testing.T) {
	t.Parallel()
	s := buildSetup(t, specWyeSub)
	r := newRecord(s, seqFloats())
	r.FreqHz = 49.99951
	r.Channels[0].RMS = 230.04999 // va
	r.Channels[0].THDPct = 2.085
	r.Channels[1].RMS = 230.05 // vb
	r.Channels[3].RMS = 47.899 // ia
	r.Phases[0].PF = -0.0001
	r.Phases[0].DPF = 0.9785
	r.Total.P, r.Total.Q1, r.Total.PF = 30990, 6570.4, 0.93649
	r.Channels[4].THDPct = metrics.Null() // ib
	r.Flags = metrics.FlagPartial | metrics.FlagGap
	lines := tableLines(t, s, TableOptions{}, r)
	head, row := lines[4], lines[5] // banner: title, caution, THD legend, blank
	names := splitHeader(t, head)
	cells := strings.Fields(row)
	if len(cells) != len(names) {
		t.Fatalf("%d cells for %d columns\n%s\n%s", len(cells), len(names), head, row)
	}
	got := map[string]string{}
	for i, n := range names {
		got[n] = cells[i]
	}
	cases := []struct {
		col, want, src string
	}{
		{"start (UTC)", "2026-03-01T10:00:00.000Z", "DESIGN Time, to the millisecond (README, Record)"},
		{"intvl", "200ms", "DESIGN interval labels"},
		{"f Hz", "50.000", "3 decimals; 49.99951 rounds up (arithmetic)"},
		{"va V", "230.0", "0.1 V; 230.04999 rounds down (arithmetic)"},
		{"vb V", exactRound(230.05, 1), "binary64 230.05 is 230.0500000000000113…, rounds up (math/big exact value)"},
		{"va THD%", exactRound(2.085, 2), "binary64 2.085 is 2.0849999999999999644…, rounds down (math/big exact value)"},
		{"ia A", "47.90", "0.01 A (arithmetic)"},
		{"ib THD%", "-", "null shown as - (README, Record)"},
		{"PF a", "0.000", "a value rounding to zero prints without sign: common practice, no source"},
		{"DPF a", exactRound(0.9785, 3), "0.001 (math/big exact value)"},
		{"P kW", "30.99", "30990 W in kW (arithmetic)"},
		{"Q kvar", "6.57", "6570.4 var in kvar, 0.01 (arithmetic)"},
		{"PF", "0.936", "0.93649 to 3 decimals (arithmetic)"},
		{"flags", "partial,gap", "metrics flag bit order"},
	}
	for _, tc := range cases {
		if got[tc.col] != tc.want {
			t.Errorf("%s = %q, want %q (src: %s)", tc.col, got[tc.col], tc.want, tc.src)
		}
	}
	if exactRound(230.05, 1) != "230.1" || exactRound(2.085, 2) != "2.08" {
		t.Errorf("math/big reference rounding unexpected: %s %s", exactRound(230.05, 1), exactRound(2.085, 2))
	}
}

// splitHeader splits the header line at runs of two or more spaces (names
// hold single spaces, such as "va V").
func splitHeader(tb testing.TB, head string) []string {
	tb.Helper()
	var out []string
	for _, f := range strings.Split(head, colGap) {
		if f = strings.TrimSpace(f); f != "" {
			out = append(out, f)
		}
	}
	return out
}

// TestTableAlignment: with values that fit their columns, every
// right-aligned cell ends and every left-aligned cell starts where its
// header does, and a row without flags is as wide as the header before
// "flags" (common practice for fixed-width tables, no source).
func TestTableAlignment(t *testing.T) {
	t.Parallel()
	s := buildSetup(t, specWyeAll)
	r := newRecord(s, randFloats(3))
	r.FreqHz = 50.01
	for i := range r.Channels {
		r.Channels[i].RMS, r.Channels[i].THDPct, r.Channels[i].TDDPct = 123.456, 12.3, math.NaN()
	}
	for k := range r.Phases {
		r.Phases[k].PF, r.Phases[k].DPF = -0.98, 0.99
	}
	r.Total.P, r.Total.Q1, r.Total.PF = -12345, 678, 0.5
	var buf bytes.Buffer
	tw := NewTable(&buf, s, TableOptions{})
	if err := tw.Write(r); err != nil {
		t.Fatal(err)
	}
	if err := tw.Flush(); err != nil {
		t.Fatal(err)
	}
	lines := strings.Split(strings.TrimSuffix(buf.String(), "\n"), "\n")
	head, row := lines[4], lines[5] // banner: title, caution, THD legend, blank
	pos := 0
	for i, c := range tw.cols {
		if i > 0 {
			pos += len(colGap)
		}
		if c.src == srcFlags {
			if len(row) != pos-len(colGap) || head[pos:] != "flags" {
				t.Errorf("row width %d, want %d (header before flags)\n%s\n%s", len(row), pos-len(colGap), head, row)
			}
			break
		}
		end := pos + c.width
		for _, l := range []string{head, row} {
			ok := l[pos] != ' ' && (end == len(l) || l[end] == ' ')
			if !c.left {
				ok = l[end-1] != ' ' && l[pos-len(colGap)] == ' '
			}
			if !ok {
				t.Errorf("column %q (%d..%d) not aligned\n%s\n%s", c.head, pos, end, head, row)
			}
		}
		pos = end
	}
}

// TestTableHeaderEvery checks the repeated header option.
func TestTableHeaderEvery(t *testing.T) {
	t.Parallel()
	s := buildSetup(t, specSingle)
	r := newRecord(s, seqFloats())
	lines := tableLines(t, s, TableOptions{HeaderEvery: 2}, r, r, r, r, r)
	n := 0
	for _, l := range lines {
		if strings.HasPrefix(l, "start (UTC)") {
			n++
		}
	}
	if n != 3 {
		t.Errorf("header printed %d times for 5 rows every 2, want 3 (rows 1, 3, 5)", n)
	}
}
