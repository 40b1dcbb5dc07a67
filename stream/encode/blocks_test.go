package encode

import (
	"bytes"
	"strings"
	"testing"

	"github.com/gridloupe/gridloupe/metrics"
)

// northWeirRef is the IEEE 519-2014 reference of the North Weir DC-2 site
// (DESIGN scenario): bus √3·230 V ≈ 398 V, Table 1 row ≤ 1 kV THD 8 %;
// ISC/IL 6100/160 = 38.1, Table 2 row 20<50, TDD 8 % (metrics/limits,
// REFERENCE 1.3 and 1.5).
var northWeirRef = &Reference{Edition: "IEEE 519-2014", BusV: 398, VTHDPct: 8, IRow: "20<50", TDDPct: 8, IRowWhy: "ISC/IL 38.1"}

// maxTermWidth: the classic terminal width, 80 columns (the widest block
// layout must fit it; common practice, no source).
const maxTermWidth = 80

func blockLines(t *testing.T, s *metrics.Setup, ref *Reference, recs ...*metrics.Record) []string {
	t.Helper()
	var buf bytes.Buffer
	w := NewBlocks(&buf, s, TableOptions{Title: "North Weir pumping station, cabinet DC-2", Reference: ref})
	for _, r := range recs {
		if err := w.Write(r); err != nil {
			t.Fatal(err)
		}
	}
	if err := w.Flush(); err != nil {
		t.Fatal(err)
	}
	return strings.Split(strings.TrimSuffix(buf.String(), "\n"), "\n")
}

// row returns the line of a block starting with label.
func row(t *testing.T, lines []string, label string) string {
	t.Helper()
	for _, l := range lines {
		if strings.HasPrefix(l, label+" ") {
			return l
		}
	}
	t.Fatalf("no row %q in\n%s", label, strings.Join(lines, "\n"))
	return ""
}

// TestBlocksLayout: a three-phase four-wire record prints one block with a
// row per phase, one for the neutral and the total, every line within 80
// columns; THD-V shows thd_h50_pct (not thd_pct) and the current column
// tdd_h50_pct, with the site's limits heading them and '!' after a value
// at or above its limit (8.01 % marked, 7.99 % not: awkward values one
// hundredth from the limit).
func TestBlocksLayout(t *testing.T) {
	t.Parallel()
	s := buildSetup(t, specWyeAll)
	r := newRecord(s, seqFloats())
	for i := range r.Channels {
		r.Channels[i].THDPct, r.Channels[i].THDH50Pct = 99, 3.25
		r.Channels[i].TDDPct, r.Channels[i].TDDH50Pct = 98, 7.99
	}
	r.Channels[s.VIdx[1]].THDH50Pct = 8.01 // vb above the voltage limit
	r.Channels[s.IIdx[2]].TDDH50Pct = 8.01 // ic above the TDD limit
	lines := blockLines(t, s, northWeirRef, r)
	for _, l := range lines {
		if len(l) > maxTermWidth {
			t.Errorf("line %d columns wide, want at most %d: %q", len(l), maxTermWidth, l)
		}
	}
	all := strings.Join(lines, "\n")
	for _, want := range []string{"thd_h50_pct", "tdd_h50_pct", "Table 2 row 20<50", "TDD below 8 %", "THD-V below 8 %", "THD-V %<8", "TDD %<8", Caution[:40]} {
		if !strings.Contains(all, want) {
			t.Errorf("output lacks %q:\n%s", want, all)
		}
	}
	if strings.Contains(all, "99.00") || strings.Contains(all, "98.00") {
		t.Errorf("thd_pct or tdd_pct shown where the orders 2-50 values belong:\n%s", all)
	}
	a, b, c := row(t, lines, "a"), row(t, lines, "b"), row(t, lines, "c")
	if strings.Contains(a, "!") || !strings.Contains(b, "8.01!") || strings.Contains(b, "7.99!") || !strings.Contains(c, "8.01!") {
		t.Errorf("marks wrong:\n%s\n%s\n%s", a, b, c)
	}
	if n := row(t, lines, "in"); strings.Contains(n, "!") {
		t.Errorf("the neutral's distortion has no IEEE 519 limit, yet is marked: %q", n)
	}
	row(t, lines, "total")
}

// TestBlocksWithoutReference: no reference, no limits and no marks; a
// harmonics list shows thd_pct/tdd_pct and says so.
func TestBlocksWithoutReference(t *testing.T) {
	t.Parallel()
	s := buildSetup(t, specSingle)
	r := newRecord(s, seqFloats())
	r.Channels[0].THDPct, r.Channels[1].TDDPct = 12.5, 40.25
	lines := blockLines(t, s, northWeirRef, r)
	all := strings.Join(lines, "\n")
	if strings.Contains(all, "!") || strings.Contains(all, "<8") {
		t.Errorf("a harmonics list has no orders 2-50 values to compare, yet limits show:\n%s", all)
	}
	if !strings.Contains(all, "thd_pct") || !strings.Contains(row(t, lines, "a"), "12.50") || !strings.Contains(row(t, lines, "a"), "40.25") {
		t.Errorf("want thd_pct and tdd_pct named and shown:\n%s", all)
	}
	if strings.Contains(all, "total") {
		t.Errorf("single-phase: the total equals the phase and has no row:\n%s", all)
	}
}
