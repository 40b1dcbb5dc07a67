package encode

import (
	"encoding/json"
	"math"
	"strings"
	"testing"
	"unicode/utf8"

	"github.com/gridloupe/gridloupe/metrics"
)

// FuzzAppendJSON feeds arbitrary float bit patterns (NaN, ±Inf, subnormals,
// -0 included) and channel names: the output must always be valid JSON
// (RFC 8259), never contain NaN or Inf, and give back finite values exactly.
func FuzzAppendJSON(f *testing.F) {
	f.Add(math.Float64bits(0.1), math.Float64bits(math.NaN()), math.Float64bits(math.Inf(1)), uint16(0), "va")
	f.Add(math.Float64bits(math.Inf(-1)), math.Float64bits(math.Copysign(0, -1)), uint64(1), uint16(0x3ff), "i\"a\\\x00\xff")
	f.Add(math.Float64bits(1e21), math.Float64bits(1e-7), math.Float64bits(math.MaxFloat64), uint16(0xffff), "ü\u2028")
	f.Fuzz(func(t *testing.T, a, b, c uint64, flags uint16, name string) {
		s := buildSetup(t, specSingle)
		s.Channels[0].Name = name
		vals := [3]float64{math.Float64frombits(a), math.Float64frombits(b), math.Float64frombits(c)}
		n := 0
		r := newRecord(s, func() float64 { n++; return vals[n%3] })
		r.FreqHz = vals[0]
		r.HasFreq10s, r.Freq10sHz = flags&1 != 0, vals[1]
		r.Flags = metrics.Flags(flags)
		out := AppendJSON(nil, s, r)
		if !json.Valid(out) {
			t.Fatalf("invalid JSON: %s", out)
		}
		if strings.Contains(string(out), "NaN") || strings.Contains(string(out), "Inf") {
			t.Fatalf("non-finite printed: %s", out)
		}
		var j jRec
		if err := json.Unmarshal(out, &j); err != nil {
			t.Fatal(err)
		}
		if finite(vals[0]) && math.Float64bits(j.FreqHz) != math.Float64bits(vals[0]) {
			t.Fatalf("freq_hz %v read back as %v", vals[0], j.FreqHz)
		}
		if utf8.ValidString(name) {
			if _, ok := j.Channels[name]; !ok {
				t.Fatalf("channel name %q not read back: %s", name, out)
			}
		}
	})
}

// FuzzJSONString: any string becomes a valid JSON string that decodes to
// the input when the input is valid UTF-8.
func FuzzJSONString(f *testing.F) {
	for _, s := range []string{"", "va", `"\`, "\x00\x1f\x7f", "\xff\xfe", "\u2028\u2029", "😀"} {
		f.Add(s)
	}
	f.Fuzz(func(t *testing.T, s string) {
		out := appendJSONString(nil, s)
		var back string
		if err := json.Unmarshal(out, &back); err != nil {
			t.Fatalf("%q → %s: %v", s, out, err)
		}
		if utf8.ValidString(s) && back != s {
			t.Fatalf("%q → %s → %q", s, out, back)
		}
	})
}

// FuzzParseFormat: ParseFormat accepts exactly the three spellings and
// String inverts it.
func FuzzParseFormat(f *testing.F) {
	for _, s := range []string{"jsonl", "csv", "table", "", "JSON", "invalid"} {
		f.Add(s)
	}
	f.Fuzz(func(t *testing.T, s string) {
		fm, ok := ParseFormat(s)
		known := s == "jsonl" || s == "csv" || s == "table"
		if ok != known || (ok && fm.String() != s) {
			t.Fatalf("ParseFormat(%q) = %v, %t", s, fm, ok)
		}
	})
}
