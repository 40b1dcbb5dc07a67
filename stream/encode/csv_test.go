package encode

import (
	"bytes"
	"encoding/csv"
	"errors"
	"math"
	"slices"
	"strconv"
	"strings"
	"testing"

	"github.com/gridloupe/gridloupe/metrics"
)

func readCSV(tb testing.TB, b []byte) [][]string {
	tb.Helper()
	rd := csv.NewReader(bytes.NewReader(b))
	rows, err := rd.ReadAll() // also enforces equal field counts per row
	if err != nil {
		tb.Fatalf("output is not RFC 4180 CSV with equal field counts: %v\n%s", err, b)
	}
	return rows
}

// TestCSVColumns checks the header against the JSON presence rules: every
// JSON leaf (flattened with dots, harmonics by order) is a column and no
// column is without a JSON leaf (src: README, Record: csv flattens the same keys;
// AppendJSON is checked against DESIGN in TestAppendJSONPresence).
func TestCSVColumns(t *testing.T) {
	t.Parallel()
	for name, sp := range map[string]setupSpec{"wye all": specWyeAll, "wye list": specWyeSub, "single": specSingle,
		"voltages": specVOnly, "currents": specIOnlyA} {
		t.Run(name, func(t *testing.T) {
			t.Parallel()
			s := buildSetup(t, sp)
			r := newRecord(s, seqFloats())
			r.HasFreq10s, r.Freq10sHz = true, 50
			var buf bytes.Buffer
			c := NewCSV(&buf, s)
			if err := c.Write(r); err != nil {
				t.Fatal(err)
			}
			if err := c.Write(r); err != nil {
				t.Fatal(err)
			}
			if err := c.Flush(); err != nil {
				t.Fatal(err)
			}
			rows := readCSV(t, buf.Bytes())
			if len(rows) != 3 {
				t.Fatalf("%d rows, want header + 2", len(rows))
			}
			head := rows[0]
			if want := []string{"interval", "start", "duration_s", "samples", "freq_hz", "freq_10s_hz", "flags"}; !slices.Equal(head[:7], want) {
				t.Errorf("first columns %v, want %v (src: README, Record)", head[:7], want)
			}
			leaves := jsonLeaves(t, AppendJSON(nil, s, r))
			cols := slices.Clone(head)
			slices.Sort(cols)
			slices.Sort(leaves)
			if !slices.Equal(cols, leaves) {
				t.Errorf("CSV columns and JSON leaves differ:\nonly CSV:  %v\nonly JSON: %v", minus(cols, leaves), minus(leaves, cols))
			}
			if got := slices.Index(head, "va.h1.rms"); got != slices.Index(head, "va.crest_factor")+1 || got < slices.Index(head, "va.thd_pct")+1+b2i(s.AllOrders) {
				t.Errorf("va.h1.rms at %d: harmonics should follow the channel's scalars", got)
			}
		})
	}
}

func b2i(b bool) int {
	if b {
		return 1
	}
	return 0
}

func minus(a, b []string) []string {
	var out []string
	for _, x := range a {
		if !slices.Contains(b, x) {
			out = append(out, x)
		}
	}
	return out
}

// jsonLeaves flattens the record object into CSV-style names:
// channels.<ch>.<k> → <ch>.<k>; harmonics[i] → <ch>.h<h>.<k>; phases.<p>.<k>
// → phase.<p>.<k>; others keep their path.
func jsonLeaves(tb testing.TB, out []byte) []string {
	tb.Helper()
	m := decodeMap(tb, out)
	var leaves []string
	var walk func(prefix string, v any)
	walk = func(prefix string, v any) {
		switch x := v.(type) {
		case map[string]any:
			for k, e := range x {
				walk(prefix+"."+k, e)
			}
		default:
			leaves = append(leaves, strings.TrimPrefix(prefix, "."))
		}
	}
	for k, v := range m {
		switch k {
		case "channels":
			for ch, cv := range v.(map[string]any) {
				for ck, x := range cv.(map[string]any) {
					if ck != "harmonics" {
						leaves = append(leaves, ch+"."+ck)
						continue
					}
					for _, h := range x.([]any) {
						hm := h.(map[string]any)
						hp := ch + ".h" + strconv.Itoa(int(hm["h"].(float64)))
						for hk := range hm {
							if hk != "h" {
								leaves = append(leaves, hp+"."+hk)
							}
						}
					}
				}
			}
		case "phases":
			walk("phase", v)
		case "flags":
			leaves = append(leaves, "flags")
		default:
			walk(k, v)
		}
	}
	return leaves
}

// TestCSVValues checks cells: shortest round-trip numbers, empty for null,
// flags joined with "|", RFC 4180 quoting of names.
func TestCSVValues(t *testing.T) {
	t.Parallel()
	s := buildSetup(t, specWyeAll)
	s.Channels[0].Name = `v"a,1` // a name that needs quoting
	next := randFloats(7)
	r := newRecord(s, next)
	r.Flags = metrics.FlagGap | metrics.FlagUndefined
	r.Channels[0].RMS = add(0.1, 0.2)
	r.Channels[3].THDPct = metrics.Null()
	r.Total.PF = math.Inf(1)
	var buf bytes.Buffer
	c := NewCSV(&buf, s)
	if err := c.Write(r); err != nil {
		t.Fatal(err)
	}
	if err := c.Flush(); err != nil {
		t.Fatal(err)
	}
	rows := readCSV(t, buf.Bytes())
	col := map[string]string{}
	for i, h := range rows[0] {
		col[h] = rows[1][i]
	}
	cases := []struct {
		key, want, src string
	}{
		{"interval", "200ms", "DESIGN interval labels"},
		{"start", "2026-03-01T10:00:00.000000Z", "DESIGN Time format"},
		{"samples", "2048", "record value"},
		{"freq_10s_hz", "", "absent value is an empty cell"},
		{"flags", "gap|undefined", "README, Record: flags joined with |, metrics bit order"},
		{`v"a,1.rms`, "0.30000000000000004", "IEEE 754 sum 0.1+0.2, shortest round-trip (strconv)"},
		{"ia.thd_pct", "", "null → empty cell (README, Record)"},
		{"total.pf", "", "non-finite → empty cell, never Inf"},
	}
	for _, tc := range cases {
		if got, ok := col[tc.key]; !ok || got != tc.want {
			t.Errorf("%s = %q (present %t), want %q (src: %s)", tc.key, got, ok, tc.want, tc.src)
		}
	}
	if !bytes.Contains(buf.Bytes(), []byte(`"v""a,1.rms"`)) {
		t.Errorf("name not quoted as RFC 4180 section 2 asks")
	}
	for _, tc := range []struct {
		key  string
		want float64
	}{
		{"ib.rms", r.Channels[4].RMS}, {"vc.h7.phase_deg", r.Channels[2].H[6].PhaseDeg},
		{"phase.b.q_var", r.Phases[1].Q1}, {"total.se_va", r.Total.Se},
		{"sequence.current.5.neg", r.SeqI[4].Neg}, {"unbalance.voltage_pct", r.UnbV},
	} {
		got, err := strconv.ParseFloat(col[tc.key], 64)
		if err != nil || math.Float64bits(got) != math.Float64bits(tc.want) {
			t.Errorf("%s = %q, want exactly %v (src: strconv shortest round-trip)", tc.key, col[tc.key], tc.want)
		}
	}
}

// TestCSVEmptyAndShape: Flush alone writes the header; a record whose
// sequence presence differs from the columns is refused.
func TestCSVEmptyAndShape(t *testing.T) {
	t.Parallel()
	s := buildSetup(t, specWyeSub)
	var buf bytes.Buffer
	c := NewCSV(&buf, s)
	if err := c.Flush(); err != nil {
		t.Fatal(err)
	}
	rows := readCSV(t, buf.Bytes())
	if len(rows) != 1 || !slices.Equal(rows[0], c.Header()) {
		t.Fatalf("empty output %q, want the header only", buf.String())
	}
	r := newRecord(s, seqFloats())
	r.SeqV = nil
	buf.Reset()
	c = NewCSV(&buf, s)
	if err := c.Write(r); !errors.Is(err, ErrShape) {
		t.Errorf("record without voltage sequences: err = %v, want ErrShape", err)
	}
}
