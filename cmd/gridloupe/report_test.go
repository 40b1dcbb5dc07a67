package main

import (
	"bufio"
	"bytes"
	"context"
	"encoding/json"
	"fmt"
	"math"
	"os"
	"path/filepath"
	"regexp"
	"strconv"
	"strings"
	"testing"
	"time"

	"github.com/gridloupe/gridloupe/metrics"
	"github.com/gridloupe/gridloupe/metrics/events"
	"github.com/gridloupe/gridloupe/store"
)

// reportWeeks: three invented weeks at North Weir DC-2 (DESIGN.md
// scenario). Half of each day the pumps draw 60 A fundamental per phase,
// half 130 A; the 5th harmonic current is k_w of the fundamental, k_w
// rising 0.02 a week (a reactor losing its effect, invented), the 7th 10 %.
const reportWeeks = 3

var reportStart = time.Date(2026, 2, 16, 0, 0, 0, 0, time.UTC)

func k5(week int) float64 { return 0.25 + 0.02*float64(week) }

func loadA(t time.Time) float64 {
	if t.Hour() < 12 {
		return 60
	}
	return 130
}

// reportTDD is the closed form of the constructed TDD: the harmonic
// current sqrt(I5² + I7²) over IL (DESIGN.md: tdd_h50_pct), IL = 160 A.
func reportTDD(i1 float64, week int) float64 {
	return 100 * math.Hypot(k5(week)*i1, 0.10*i1) / 160
}

func fillReportRecord(s *metrics.Setup, r *metrics.Record, iv metrics.Interval, start time.Time) {
	r.Interval, r.Start, r.DurationS, r.Flags = iv, start, 3, 0
	if iv == metrics.Int10min {
		r.DurationS = 600
	}
	week := int(start.Sub(reportStart) / (7 * 24 * time.Hour))
	i1 := loadA(start)
	r.FreqHz = 50 + 0.02*math.Sin(float64(start.Unix())/3600)
	for i, c := range s.Channels {
		ch := &r.Channels[i]
		for j := range ch.H {
			h, hm := ch.H[j].H, &ch.H[j]
			hm.PhaseDeg = 0
			switch {
			case c.Kind == metrics.Voltage && h == 1:
				hm.RMS = 230
			case c.Kind == metrics.Voltage && h == 5:
				hm.RMS, hm.PhaseDeg = 0.03*230, -118 // 3 % (Table 1 ≤ 1 kV: 5 %)
			case c.Kind == metrics.Voltage && h == 7:
				hm.RMS, hm.PhaseDeg = 0.02*230, 10
			case c.Kind == metrics.Voltage:
				hm.RMS = 0.002 * 230
			case h == 1:
				hm.RMS = i1
			case h == 5:
				hm.RMS, hm.PhaseDeg = k5(week)*i1, 62 // 180° from its voltage: injected
			case h == 7:
				hm.RMS, hm.PhaseDeg = 0.10*i1, -20 // 30° from its voltage: absorbed
			default:
				hm.RMS = 0.0002 * 160
			}
			hm.Pct = 100 * hm.RMS / ch.H[0].RMS
			hm.PctIL = 100 * hm.RMS / 160
		}
		ch.RMS = ch.H[0].RMS
		if c.Kind == metrics.Voltage {
			ch.THDPct, ch.THDH50Pct = 3.7, 3.6
			ch.TDDPct, ch.TDDH50Pct = metrics.Null(), metrics.Null()
		} else {
			tdd := reportTDD(i1, week)
			ch.THDPct, ch.THDH50Pct, ch.TDDPct, ch.TDDH50Pct = tdd*160/i1, tdd*160/i1, tdd, tdd
		}
	}
	for p := range r.Phases {
		r.Phases[p].P, r.Phases[p].Q1, r.Phases[p].S, r.Phases[p].PF, r.Phases[p].DPF = 230*i1*0.97, 230*i1*0.2, 230*i1, 0.93, 0.98
	}
	r.Total = metrics.TotalValues{P: 3 * 230 * i1 * 0.97, Q1: 3 * 230 * i1 * 0.2, S: 3 * 230 * i1, Se: 3 * 230 * i1, Ve: 230, Ie: i1, PF: 0.93, DPF: 0.98}
}

func buildReportStore(t *testing.T) (cfgPath, dbPath string) {
	t.Helper()
	cfgPath, dbPath, setup, db := newEvalStore(t, "gateway: dc2-gw1\n"+evalCfgAll)
	defer db.Close()
	var recs []*metrics.Record
	flush := func() {
		if err := db.PutAggregates(recs); err != nil {
			t.Fatal(err)
		}
		recs = recs[:0]
	}
	put := func(iv metrics.Interval, at time.Time) {
		r := metrics.NewRecord(setup)
		fillReportRecord(setup, r, iv, at)
		if recs = append(recs, r); len(recs) == 512 {
			flush()
		}
	}
	for i := range reportWeeks * 7 * 144 {
		put(metrics.Int10min, reportStart.Add(time.Duration(i)*10*time.Minute))
	}
	for d := range reportWeeks * 7 {
		for i := range 12 { // a few 3 s values a day: the daily lines are incomplete, as in a thinned store
			put(metrics.Int3s, reportStart.Add(time.Duration(d)*24*time.Hour+time.Duration(i)*2*time.Hour+time.Hour))
		}
	}
	flush()
	dipAt := reportStart.Add(15*24*time.Hour + 9*time.Hour + 1234*time.Millisecond) // in the reported (third) week
	if _, err := db.PutEvent(events.Record{Kind: events.Dip, ID: events.ID(events.Dip, dipAt), Start: dipAt, DurationS: 0.12,
		Channels: []string{"va", "vb"}, Worst: "va", ExtremeV: 138.3, ExtremePct: 60.1}, nil, nil); err != nil {
		t.Fatal(err)
	}
	if err := db.PutEnergy([]store.Energy{{Circuit: "main", ImportWh: 4.2e6, VarhQ: [4]float64{8.5e5, 0, 0, 1200}}},
		[]store.DemandMonth{{Month: "2026-02", MaxA: [3]float64{131, 131.5, 130.2}, MaxW: 88000, At: reportStart}}); err != nil {
		t.Fatal(err)
	}
	return cfgPath, dbPath
}

func TestReport(t *testing.T) {
	cfgPath, dbPath := buildReportStore(t)
	out := filepath.Join(shotDir(t), "week.html")
	var so, se bytes.Buffer
	if err := run(context.Background(), []string{"report", "--config", cfgPath, "--store", dbPath, "-o", out}, nil, &so, &se); err != nil {
		t.Fatalf("report: %v\n%s", err, se.String())
	}
	page, err := os.ReadFile(out)
	if err != nil {
		t.Fatal(err)
	}
	html := string(page)
	for _, bad := range []string{"http://", "https://", "<script", "src=", "<link", "url("} {
		if strings.Contains(html, bad) {
			t.Errorf("report refers to something outside itself (%q); it must be self-contained", bad)
		}
	}
	for _, w := range []string{"qualified personnel", "measurement category", "open-circuit the secondary of a loaded CT", "not a protective device", "electrical codes", "point of common coupling", "@page { size: A4"} {
		if !strings.Contains(html, w) {
			t.Errorf("report lacks %q (README Safety; DESIGN.md Safety: every report carries the cautions)", w)
		}
	}
	// The table's margins against evaluate's own lines: margin = threshold − value.
	var ev bytes.Buffer
	if err := run(context.Background(), []string{"evaluate", "--config", cfgPath, "--store", dbPath, "--format", "jsonl"}, nil, &ev, &se); err != nil {
		t.Fatal(err)
	}
	checked := 0
	sc := bufio.NewScanner(&ev)
	sc.Buffer(nil, 1<<20)
	for sc.Scan() {
		var l struct {
			Type, Channel, Quantity, Statistic string
			Value                              *float64 `json:"value_pct"`
			Threshold                          float64  `json:"threshold_pct"`
		}
		if json.Unmarshal(sc.Bytes(), &l) != nil || l.Type != "line" || l.Value == nil || !strings.HasSuffix(l.Quantity, "_h50") {
			continue
		}
		m := l.Threshold - *l.Value
		want := fmt.Sprintf("<td>%s</td><td class=\"l\">%s</td><td class=\"l\">%s</td><td>%.2f</td>", l.Channel, l.Quantity, l.Statistic, *l.Value)
		if !strings.Contains(html, want) || !strings.Contains(html, fmt.Sprintf("%+.2f (%.0f %%)", m, 100*m/l.Threshold)) {
			t.Errorf("report lacks evaluate's line %s %s %s = %.2f with margin %+.2f", l.Channel, l.Quantity, l.Statistic, *l.Value, m)
		}
		checked++
	}
	if checked < 6 {
		t.Errorf("only %d THD/TDD weekly lines checked", checked)
	}
	if n := strings.Count(html, `<rect class="bar"`); n < 6*45 {
		t.Errorf("%d spectrum bars, want about 6 channels × 49 orders", n)
	}
	if n := strings.Count(html, `<path class="line"`); n != 3+3+1+1 {
		t.Errorf("%d trend lines, want 8 (THD of 3 voltages, TDD of 3 currents, PF, frequency)", n)
	}
	// Directions: h5 constructed 180° from its voltage (P5 < 0: injected),
	// h7 30° (P7 > 0: absorbed); closed form cos(180°) = −1, cos(30°) > 0.
	for h, want := range map[int]string{5: "injects", 7: "absorbs"} {
		re := regexp.MustCompile(fmt.Sprintf(`<tr class="dir"><td>%d</td>.*?<td class="l">(\w+)</td></tr>`, h))
		if m := re.FindStringSubmatch(html); m == nil || m[1] != want {
			t.Errorf("order %d: %v, want %s", h, m, want)
		}
	}
	// Ageing: bin 30–40 % of IL (60 A = 37.5 %) and 80–90 % (130 A) hold
	// 72 values a week; the cell is the constructed TDD (closed form above).
	rows := regexp.MustCompile(`<tr class="age"><td>([0-9-]+)</td>(.*?)</tr>`).FindAllStringSubmatch(html, -1)
	if len(rows) != reportWeeks {
		t.Fatalf("%d ageing rows, want %d", len(rows), reportWeeks)
	}
	for w, row := range rows {
		for _, i1 := range []float64{60, 130} {
			if want := fmt.Sprintf("%.2f", reportTDD(i1, w)); !strings.Contains(row[2], ">"+want+"<") {
				t.Errorf("week %d: no cell %s %% for %v A in %s", w, want, i1, row[2])
			}
		}
	}
	if want := fmt.Sprintf("moved %.2f points", reportTDD(60, 2)-reportTDD(60, 0)); !strings.Contains(html, want) {
		t.Errorf("ageing trend: report lacks %q", want)
	}
	if !strings.Contains(html, "<td>2026-03-03 09:00 UTC</td><td class=\"l\">dip</td><td>0.120</td><td>60.1</td><td class=\"l\">va vb</td>") {
		t.Error("the stored dip of the week is not listed")
	}
	if !strings.Contains(html, "4200.0 / 0.0 kWh") || !strings.Contains(html, "131.0 / 131.5 / 130.2 A") {
		t.Error("energy registers or the month's maximum demand missing")
	}

	// Rendered in a real browser: a picture, and A4 pages when printed.
	if testing.Short() && os.Getenv("CI") == "" {
		return
	}
	needTool(t, "chromium")
	shots := shotDir(t)
	png := filepath.Join(shots, "report-page.png")
	headless(t, "--window-size=900,1270", "--screenshot="+png, "file://"+out)
	if fi, err := os.Stat(png); err != nil || fi.Size() < 20000 {
		t.Errorf("report screenshot %s: %v", png, err)
	}
	pdf := filepath.Join(t.TempDir(), "week.pdf")
	headless(t, "--no-pdf-header-footer", "--print-to-pdf="+pdf, "file://"+out)
	b, err := os.ReadFile(pdf)
	if err != nil {
		t.Fatal(err)
	}
	pages := regexp.MustCompile(`/Type\s*/Page[^s]`).FindAll(b, -1)
	if len(pages) < 2 || len(pages) > 8 {
		t.Errorf("printed report has %d pages, want a few A4 pages", len(pages))
	}
	// ISO 216 A4 is 210 × 297 mm = 595.3 × 841.9 pt; Chromium rounds to whole device pixels.
	const a4Tol = 1.0 // pt
	m := regexp.MustCompile(`/MediaBox\s*\[\s*0\s+0\s+([0-9.]+)\s+([0-9.]+)`).FindSubmatch(b)
	if m == nil {
		t.Fatal("printed report has no MediaBox")
	}
	w, _ := strconv.ParseFloat(string(m[1]), 64)
	h, _ := strconv.ParseFloat(string(m[2]), 64)
	if math.Abs(w-595.28) > a4Tol || math.Abs(h-841.89) > a4Tol {
		t.Errorf("printed page %v × %v pt, want A4 595.3 × 841.9 pt (ISO 216)", w, h)
	}
	checkTablesFit(t, page)
}

// fitScript measures, once the page is laid out, the body's width and each
// table's scrollWidth against it, and writes them into the page, which
// --dump-dom then prints.
const fitScript = `<script>
const lines = ["body " + document.body.clientWidth];
document.querySelectorAll("table").forEach((t, i) => lines.push("table " + i + " " + t.scrollWidth));
const pre = document.createElement("pre");
pre.id = "fit";
pre.textContent = lines.join("\n");
document.body.appendChild(pre);
</script>`

// checkTablesFit lays the report out in chromium at the width of its A4
// text column and checks that no table is wider than the column: printed,
// whatever sticks out is cut off at the page edge. The report itself holds
// no script (it must stay self-contained); the measuring copy does.
func checkTablesFit(t *testing.T, page []byte) {
	t.Helper()
	// The text column: ISO 216 A4 is 210 mm wide, the report's @page rule
	// takes 13 mm each side and its body is max-width 184 mm, so a window
	// wider than 184 mm lays the body out as print does (no print-only
	// rules). CSS pixels: 96 per inch (CSS Values 4, absolute lengths).
	const columnPx = 184 / 25.4 * 96 // 695.4
	const bodyTol = 1.0              // px: chromium rounds clientWidth to whole pixels
	html := strings.Replace(string(page), "</body>", fitScript+"</body>", 1)
	p := filepath.Join(t.TempDir(), "fit.html")
	if err := os.WriteFile(p, []byte(html), 0o644); err != nil {
		t.Fatal(err)
	}
	dom := string(headless(t, "--window-size=900,1270", "--dump-dom", "file://"+p))
	m := regexp.MustCompile(`(?s)<pre id="fit">(.*?)</pre>`).FindStringSubmatch(dom)
	if m == nil {
		t.Fatalf("the measuring script wrote nothing:\n%s", dom[:min(len(dom), 400)])
	}
	var body float64
	tables := 0
	for _, l := range strings.Split(m[1], "\n") {
		f := strings.Fields(l)
		switch {
		case len(f) == 2 && f[0] == "body":
			body, _ = strconv.ParseFloat(f[1], 64)
			if math.Abs(body-columnPx) > bodyTol {
				t.Fatalf("body laid out %v px wide, want the A4 text column %.1f px", body, columnPx)
			}
		case len(f) == 3 && f[0] == "table":
			tables++
			if w, _ := strconv.ParseFloat(f[2], 64); w > body {
				t.Errorf("table %s is %v px wide, %.1f mm more than the %.0f px A4 text column: printed, its right edge is cut off", f[1], w, (w-body)*25.4/96, body)
			}
		}
	}
	if tables < 4 {
		t.Errorf("measured %d tables, want the evaluation, energy, direction, ageing and events tables", tables)
	}
}
