package web

import (
	"bytes"
	"log/slog"
	"math"
	"net/http"
	"net/http/httptest"
	"strings"
	"testing"
	"time"
	"unicode/utf8"

	"github.com/gridloupe/gridloupe/metrics/metricstest"
	"github.com/gridloupe/gridloupe/stream/live"
)

// TestAppendValue: sample values as the text format writes them. src:
// Prometheus text exposition format 0.0.4 (from memory: Go float syntax,
// NaN, +Inf, -Inf) and strconv's shortest round-trip form.
func TestAppendValue(t *testing.T) {
	for _, tc := range []struct {
		v    float64
		want string
	}{
		{0, "0"},
		{math.Copysign(0, -1), "0"}, // the Go client library writes -0 as 0 (golden capture)
		{1, "1"},
		{-1, "-1"},
		{0.1, "0.1"},
		{230.05, "230.05"},
		{3.6e6, "3.6e+06"},
		{4.7e-7, "4.7e-07"},
		{1e21, "1e+21"},
		{123456789, "1.23456789e+08"},
		{math.NaN(), "NaN"},
		{math.Inf(1), "+Inf"},
		{math.Inf(-1), "-Inf"},
	} {
		if got := string(appendValue(nil, tc.v)); got != tc.want {
			t.Errorf("appendValue(%v) = %q, want %q", tc.v, got, tc.want)
		}
	}
}

// TestAppendEscaped: HELP escapes backslash and line feed; a label value
// also the double quote; invalid UTF-8 becomes U+FFFD. src: Prometheus
// text exposition format 0.0.4 (from memory).
func TestAppendEscaped(t *testing.T) {
	for _, tc := range []struct {
		in          string
		quote       bool
		want        string
		description string
	}{
		{`a\b`, false, `a\\b`, "backslash in HELP"},
		{"a\nb", false, `a\nb`, "line feed in HELP"},
		{`say "x"`, false, `say "x"`, "a quote stays in HELP"},
		{`say "x"`, true, `say \"x\"`, "a quote is escaped in a label value"},
		{"\\\"\n", true, `\\\"\n`, "all three"},
		{"tab\tstays", true, "tab\tstays", "other control characters pass"},
		{"Schaltschrank Süd", true, "Schaltschrank Süd", "UTF-8 passes"},
		{"bad\xffbyte", true, "bad\uFFFDbyte", "invalid UTF-8"},
		{"bad\xff\xfebytes", true, "bad\uFFFDbytes", "a run of invalid bytes: one U+FFFD (as strings.ToValidUTF8)"},
		{"", true, "", "empty"},
	} {
		if got := string(appendEscaped(nil, tc.in, tc.quote)); got != tc.want {
			t.Errorf("%s: appendEscaped(%q, %v) = %q, want %q", tc.description, tc.in, tc.quote, got, tc.want)
		}
	}
}

// TestExpositionOrderAndDuplicates: families sorted by name and empty ones
// left out, series sorted by label values in label-name order, a repeated
// label set written once and counted. src: the order the Go client library
// writes (golden capture); a repeated series fails the whole scrape in
// Prometheus (from memory).
func TestExpositionOrderAndDuplicates(t *testing.T) {
	cl := []label{{"site", "s"}}
	z := &family{name: "z_total", help: "Z.", counter: true}
	z.add(2, cl)
	empty := &family{name: "m_empty", help: "never written"}
	a := &family{name: "a", help: "A."}
	a.add(3, cl, "phase", "c", "level", "3s")
	a.add(1, cl, "phase", "a", "level", "3s")
	a.add(2, cl, "phase", "b", "level", "10min")
	a.add(9, cl, "phase", "a", "level", "3s")
	got, dup := appendExposition(nil, []*family{z, empty, a})
	want := `# HELP a A.
# TYPE a gauge
a{level="10min",phase="b",site="s"} 2
a{level="3s",phase="a",site="s"} 1
a{level="3s",phase="c",site="s"} 3
# HELP z_total Z.
# TYPE z_total counter
z_total{site="s"} 2
`
	if string(got) != want {
		t.Errorf("got\n%s\nwant\n%s", got, want)
	}
	if dup != 1 {
		t.Errorf("%d duplicates counted, want 1", dup)
	}
	bare := &family{name: "b", help: "no labels"}
	bare.add(5, nil)
	if got, _ := appendExposition(nil, []*family{bare}); !strings.HasSuffix(string(got), "\nb 5\n") {
		t.Errorf("a series without labels: %q", got)
	}
}

// FuzzExposition: any label value, HELP text and value round-trips
// through the Prometheus library's text parser unchanged (label values
// and HELP after U+FFFD replacement of invalid UTF-8; NaN as NaN).
// Every HELP text the server writes is a constant without leading blanks.
func FuzzExposition(f *testing.F) {
	f.Add("north \"weir\"\\dc2\nb", "Help \\ with\nbreaks", 230.05)
	f.Add("", "", math.Inf(-1))
	f.Add("\xff\xfe", "\x00", math.NaN())
	f.Fuzz(func(t *testing.T, value, help string, v float64) {
		fam := &family{name: "gridloupe_fuzz", help: help}
		fam.add(v, []label{{"site", value}}, "channel", value+"x")
		body, _ := appendExposition(nil, []*family{fam})
		fams := parseText(t, string(body))
		got := fams["gridloupe_fuzz"]
		if got == nil || len(got.Metric) != 1 {
			t.Fatalf("parsed %v from %q", fams, body)
		}
		// The parser drops the blanks between the name and the text.
		if got.GetHelp() != strings.TrimLeft(strings.ToValidUTF8(help, string(utf8.RuneError)), " \t") {
			t.Errorf("HELP %q, want %q", got.GetHelp(), help)
		}
		m := got.Metric[0]
		want := map[string]string{"site": value, "channel": value + "x"}
		for _, l := range m.Label {
			if w := strings.ToValidUTF8(want[l.GetName()], string(utf8.RuneError)); l.GetValue() != w {
				t.Errorf("label %s = %q, want %q", l.GetName(), l.GetValue(), w)
			}
		}
		gv := m.GetGauge().GetValue()
		if gv != v && !(math.IsNaN(gv) && math.IsNaN(v)) {
			t.Errorf("value %v, want %v (%q)", gv, v, body)
		}
	})
}

// TestMetricsDuplicateWarned: a series written twice (here two alarms of
// one name and severity) is served once, so the scrape stays valid, and
// the drop is logged with its count (expo.go appendExposition doc; a
// repeated series fails the whole scrape in Prometheus, from memory).
func TestMetricsDuplicateWarned(t *testing.T) {
	var logBuf bytes.Buffer
	b := live.New(metricstest.Wye(t), time.Now, func() live.Health { return live.Health{} })
	srv, err := New(Config{Addr: "127.0.0.1:0", Board: b, Site: "s", Gateway: "g",
		Alarms: []Alarm{{"thd-va", "warning"}, {"thd-va", "warning"}}, Logger: slog.New(slog.NewTextHandler(&logBuf, nil))})
	if err != nil {
		t.Fatal(err)
	}
	rec := httptest.NewRecorder()
	srv.srv.Handler.ServeHTTP(rec, httptest.NewRequest(http.MethodGet, "/metrics", nil))
	fams := parseText(t, rec.Body.String())
	if f := fams["gridloupe_alarm_active"]; f == nil || len(f.Metric) != 1 {
		t.Errorf("gridloupe_alarm_active: %v, want one series", f)
	}
	if log := logBuf.String(); !strings.Contains(log, "same labels dropped") || !strings.Contains(log, "count=1") {
		t.Errorf("log %q, want the drop warned with count=1", log)
	}
}
