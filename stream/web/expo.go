package web

import (
	"cmp"
	"math"
	"slices"
	"strconv"
	"strings"
	"unicode/utf8"
)

// expoContentType is the Content-Type of the Prometheus text exposition
// format, version 0.0.4. The names are valid legacy names, so
// "escaping=underscores" (the client libraries' default) changes nothing.
const expoContentType = "text/plain; version=0.0.4; charset=utf-8; escaping=underscores"

// label is one label pair.
type label struct{ name, value string }

// sample is one series of a family: its labels sorted by name and its value.
type sample struct {
	labels []label
	value  float64
}

// family is one metric family of a scrape: one name, one HELP, one TYPE.
type family struct {
	name, help string
	counter    bool // TYPE counter, else gauge
	samples    []sample
}

// add appends a sample with the labels lv (pairs of name, value) and the
// constant labels cl; the pairs are sorted by name.
func (f *family) add(v float64, cl []label, lv ...string) {
	ls := make([]label, 0, len(cl)+len(lv)/2)
	ls = append(ls, cl...)
	for i := 0; i+1 < len(lv); i += 2 {
		ls = append(ls, label{lv[i], lv[i+1]})
	}
	slices.SortFunc(ls, func(a, b label) int { return strings.Compare(a.name, b.name) })
	f.samples = append(f.samples, sample{labels: ls, value: v})
}

// compareSamples orders the series of one family by their label values in
// label-name order (every series of a family has the same label names).
func compareSamples(a, b sample) int {
	if c := cmp.Compare(len(a.labels), len(b.labels)); c != 0 {
		return c
	}
	for i := range a.labels {
		if c := strings.Compare(a.labels[i].value, b.labels[i].value); c != 0 {
			return c
		}
	}
	return 0
}

// appendExposition writes fams in the text exposition format 0.0.4:
// families sorted by name, a family without series left out, the series of
// a family sorted by label values. A second series with the same labels as
// an earlier one is dropped (a scraper would reject the whole scrape) and
// counted in the returned number.
func appendExposition(b []byte, fams []*family) ([]byte, int) {
	slices.SortStableFunc(fams, func(x, y *family) int { return strings.Compare(x.name, y.name) })
	dup := 0
	for _, f := range fams {
		if len(f.samples) == 0 {
			continue
		}
		slices.SortStableFunc(f.samples, compareSamples)
		b = append(b, "# HELP "...)
		b = append(b, f.name...)
		b = append(b, ' ')
		b = appendEscaped(b, f.help, false)
		b = append(b, "\n# TYPE "...)
		b = append(b, f.name...)
		if f.counter {
			b = append(b, " counter\n"...)
		} else {
			b = append(b, " gauge\n"...)
		}
		for i, s := range f.samples {
			if i > 0 && compareSamples(f.samples[i-1], s) == 0 {
				dup++
				continue
			}
			b = append(b, f.name...)
			for j, l := range s.labels {
				if j == 0 {
					b = append(b, '{')
				} else {
					b = append(b, ',')
				}
				b = append(b, l.name...)
				b = append(b, `="`...)
				b = appendEscaped(b, l.value, true)
				b = append(b, '"')
			}
			if len(s.labels) > 0 {
				b = append(b, '}')
			}
			b = append(b, ' ')
			b = appendValue(b, s.value)
			b = append(b, '\n')
		}
	}
	return b, dup
}

// appendEscaped appends s with backslash and line feed escaped, and the
// double quote too in a label value (text format 0.0.4). A run of invalid
// UTF-8 becomes one U+FFFD, since the format is UTF-8.
func appendEscaped(b []byte, s string, quote bool) []byte {
	if !utf8.ValidString(s) {
		s = strings.ToValidUTF8(s, string(utf8.RuneError))
	}
	for i := 0; i < len(s); i++ {
		switch c := s[i]; {
		case c == '\\':
			b = append(b, `\\`...)
		case c == '\n':
			b = append(b, `\n`...)
		case c == '"' && quote:
			b = append(b, `\"`...)
		default:
			b = append(b, c)
		}
	}
	return b
}

// appendValue appends v as the format writes a sample value: the shortest
// decimal that reads back as v, NaN, +Inf or -Inf. Zero is "0" whatever
// its sign, as the Go client library writes it.
func appendValue(b []byte, v float64) []byte {
	switch {
	case v == 0:
		return append(b, '0')
	case math.IsNaN(v):
		return append(b, "NaN"...)
	case math.IsInf(v, 1):
		return append(b, "+Inf"...)
	case math.IsInf(v, -1):
		return append(b, "-Inf"...)
	}
	return strconv.AppendFloat(b, v, 'g', -1, 64)
}
