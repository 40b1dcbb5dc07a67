package report

import (
	"bytes"
	"math"
	"strings"
	"testing"
	"time"

	"github.com/gridloupe/gridloupe/metrics/compliance"
)

func TestWriteNeedsResult(t *testing.T) {
	if err := Write(&bytes.Buffer{}, &Data{}); err == nil {
		t.Error("a report without an evaluation was written")
	}
}

func TestBarsAndTrend(t *testing.T) {
	b := string(barSVG(Bars{Title: "ia <h>", Orders: []int{2, 3, 5}, Values: []float64{0.2, math.NaN(), 9}, Limits: []float64{1.75, 7, 7}}))
	if strings.Count(b, `class="bar"`) != 2 || strings.Count(b, `class="limit"`) != 3 || strings.Count(b, "#b5262e\"/>") != 1 {
		t.Errorf("bars: want 2 bars (one null left out), 3 limit ticks and one bar over its limit drawn red:\n%s", b)
	}
	if strings.Contains(b, "<h>") {
		t.Error("title not escaped")
	}
	t0 := time.Date(2026, 3, 2, 0, 0, 0, 0, time.UTC)
	tr := Trend{Title: "TDD", Unit: "%", Limit: 8, From: t0, To: t0.Add(7 * 24 * time.Hour),
		Series: []Series{{Name: "ia", Times: []time.Time{t0, t0.Add(10 * time.Minute), t0.Add(2 * time.Hour)}, Values: []float64{5, 6, 7}}}}
	l := string(lineSVG(tr))
	// A gap over 25 minutes starts a new stroke: M, L, then M again.
	if !strings.Contains(l, `d="M`) || strings.Count(l, "M") < 2 || strings.Count(l, "L") != 1 {
		t.Errorf("trend path should break at the 110 min gap:\n%s", l)
	}
}

func TestPage(t *testing.T) {
	res := &compliance.Result{Edition: "IEEE 519-2014", Start: time.Date(2026, 3, 2, 0, 0, 0, 0, time.UTC), Verdict: compliance.Pass, Ratio: math.NaN()}
	res.End = res.Start.Add(7 * 24 * time.Hour)
	var buf bytes.Buffer
	if err := Write(&buf, &Data{Site: "north-weir-dc2", Result: res, Cautions: []string{"qualified personnel only"}, PCC: "at the PCC", EventsNote: "none stored"}); err != nil {
		t.Fatal(err)
	}
	for _, w := range []string{"PASS", "qualified personnel only", "None listed: none stored", "@page { size: A4"} {
		if !strings.Contains(buf.String(), w) {
			t.Errorf("page lacks %q", w)
		}
	}
}
