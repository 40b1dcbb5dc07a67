package report

import (
	"fmt"
	"html/template"
	"io"
	"math"
	"sync"
	"time"

	"github.com/gridloupe/gridloupe/metrics/compliance"
	"github.com/gridloupe/gridloupe/metrics/harmdiag"
)

// KV is one labelled figure.
type KV struct{ Label, Value string }

// Event is one stored voltage event in the report's list.
type Event struct {
	Kind       string
	Start      time.Time
	DurationS  float64
	ExtremePct float64
	Channels   string
}

// Data is everything one report shows.
type Data struct {
	Site, Gateway string
	Generated     time.Time
	Store         string
	Cautions      []string // safety cautions, shown first
	PCC           string   // the point-of-common-coupling caution
	Result        *compliance.Result
	Lines         []compliance.Line // the lines the table shows
	HiddenNote    string            // what the table leaves out
	Spectra       []Bars
	SpectraNote   string
	Trends        []Trend
	Energy        []KV
	EnergyNote    string
	Directions    []harmdiag.Direction
	Ageing        harmdiag.Table
	Events        []Event
	EventsNote    string // why the list is empty, when it is
}

// Write renders d as one HTML document.
func Write(w io.Writer, d *Data) error {
	if d.Result == nil {
		return fmt.Errorf("report: no evaluation result")
	}
	if err := page().Execute(w, d); err != nil {
		return fmt.Errorf("report: %w", err)
	}
	return nil
}

// page parses the report template on first use, not at package
// initialisation: every gridloupe command links this package, and only
// `report` renders it.
var page = sync.OnceValue(func() *template.Template {
	return template.Must(template.New("report").Funcs(funcs()).Parse(pageHTML))
})

// funcs are the template's helpers.
func funcs() template.FuncMap {
	return template.FuncMap{
		"bars":   barSVG,
		"trend":  lineSVG,
		"legend": legend,
		"day":    func(t time.Time) string { return t.UTC().Format("2006-01-02") },
		"stamp":  func(t time.Time) string { return t.UTC().Format("2006-01-02 15:04 UTC") },
		"pct": func(v float64) string {
			if math.IsNaN(v) {
				return "–"
			}
			return fmt.Sprintf("%.2f", v)
		},
		"num": func(v float64, digits int) string {
			if math.IsNaN(v) || math.IsInf(v, 0) {
				return "–"
			}
			return fmt.Sprintf("%.*f", digits, v)
		},
		"margin": func(l compliance.Line) template.HTML {
			if math.IsNaN(l.Value) {
				return "–"
			}
			// numbers only: nothing to escape (html/template would turn + into &#43;)
			return template.HTML(fmt.Sprintf("%+.2f (%.0f %%)", l.Threshold-l.Value, 100*(l.Threshold-l.Value)/l.Threshold))
		},
		"cls": func(v compliance.Verdict) string { return v.String() },
		"worst": func(r *compliance.Result, l compliance.Line) string {
			if l.WorstDay < 0 || l.Statistic != compliance.DailyP99 {
				return ""
			}
			return r.Days[l.WorstDay].Start.Format("Mon 01-02")
		},
		"cov":  func(c float64) string { return fmt.Sprintf("%.0f %%", 100*c) },
		"week": func(t harmdiag.Table, w int) string { return day(t.Start.Add(time.Duration(w) * 7 * 24 * time.Hour)) },
		"cell": func(t harmdiag.Table, w, j int) string {
			if v := t.TDD[w][j]; !math.IsNaN(v) {
				return fmt.Sprintf("%.2f", v)
			}
			if t.N[w][j] > 0 {
				return fmt.Sprintf("(%d)", t.N[w][j])
			}
			return ""
		},
		"upper": func(b int) int { return b + harmdiag.BinPct },
		"hi":    func(t harmdiag.Table, j int) bool { return t.Best >= 0 && t.Bins[j] == t.Best },
		"verdict": func(v compliance.Verdict) string {
			switch v {
			case compliance.Pass:
				return "PASS: every statistic below its threshold"
			case compliance.Fail:
				return "FAIL: at least one statistic at or above its threshold"
			}
			return "INCOMPLETE: too little data to pass"
		},
	}
}

func day(t time.Time) string { return t.UTC().Format("2006-01-02") }

const pageHTML = `<!DOCTYPE html>
<html lang="en"><head><meta charset="utf-8">
<title>Weekly harmonic report · {{.Site}} · {{day .Result.Start}}</title>
<style>
@page { size: A4; margin: 14mm 13mm; }
* { box-sizing: border-box; }
body { font: 10pt/1.35 "DejaVu Sans", system-ui, sans-serif; color: #1c262d; margin: 0 auto; max-width: 184mm; padding: 8mm 0; }
h1 { font-size: 16pt; margin: 0 0 2pt; }
h2 { font-size: 11.5pt; margin: 12pt 0 4pt; border-bottom: 1.5pt solid #1f6f99; padding-bottom: 1pt; break-after: avoid; }
h3 { font-size: 10pt; margin: 6pt 0 2pt; }
.sub { color: #56646e; margin: 0 0 6pt; }
.caution { border: 1.5pt solid #b5262e; background: #fdf2f2; padding: 5pt 8pt; margin: 6pt 0; break-inside: avoid; }
.caution ul { margin: 2pt 0 0 14pt; padding: 0; }
.verdict { font-weight: bold; font-size: 11pt; padding: 4pt 8pt; margin: 6pt 0; border-left: 5pt solid #888; background: #f3f4f1; }
.verdict.pass { border-color: #3b8a3e; } .verdict.fail { border-color: #b5262e; } .verdict.incomplete { border-color: #d0781c; }
table { border-collapse: collapse; width: 100%; font-variant-numeric: tabular-nums; margin: 3pt 0; font-size: 8pt; }
th, td { padding: 1.2pt 2.5pt; border-bottom: 0.6pt solid #d5d9d2; text-align: right; white-space: nowrap; }
th { white-space: normal; vertical-align: bottom; }
table.lines { font-size: 7.5pt; }
td.wrap { white-space: normal; text-align: left; }
th { background: #eef1ec; font-weight: 600; }
th:first-child, td:first-child, td.l, th.l { text-align: left; }
tr { break-inside: avoid; }
td.fail { color: #b5262e; font-weight: bold; } td.incomplete { color: #9a5a12; } td.pass { color: #2f7032; }
.charts { display: grid; grid-template-columns: 1fr 1fr; gap: 4pt 10pt; }
figure { margin: 0; break-inside: avoid; }
figcaption { font-size: 9pt; font-weight: 600; }
svg { width: 100%; height: auto; display: block; }
svg .grid { stroke: #e3e6e0; stroke-width: 0.6; } svg .ax { font-size: 8px; fill: #56646e; }
.key { font-size: 8.5pt; margin-right: 8pt; color: #38444c; } .key i { display: inline-block; width: 8pt; height: 8pt; margin-right: 3pt; vertical-align: -1pt; }
.note { color: #56646e; font-size: 9pt; }
td.hi { background: #fff4e0; font-weight: 600; }
section { break-inside: auto; }
.pb { break-before: page; }
</style></head><body>
<h1>Weekly harmonic report: {{.Site}}</h1>
<p class="sub">gateway {{.Gateway}} · week {{day .Result.Start}} to {{day .Result.End}} (UTC) · {{.Result.Edition}} · generated {{stamp .Generated}} from {{.Store}}</p>
<div class="caution"><b>Safety.</b><ul>{{range .Cautions}}<li>{{.}}</li>{{end}}</ul><p style="margin:3pt 0 0"><b>Point of common coupling.</b> {{.PCC}}</p></div>
<div class="verdict {{cls .Result.Verdict}}">{{verdict .Result.Verdict}}</div>

<h2>IEEE 519 weekly evaluation</h2>
<p class="note">Voltage: bus {{num .Result.BusV 0}} V, Table 1 {{num .Result.VIndivLimit 1}} % individual, {{num .Result.VTHDLimit 1}} % THD (THD % of fundamental, harmonics % of nominal voltage).
{{if gt .Result.IL 0.0}}Current: IL {{num .Result.IL 0}} A, ISC/IL {{num .Result.Ratio 1}}, Table 2 row {{.Result.Row}}, TDD {{num .Result.TDDLimit 1}} % (TDD and harmonics % of IL).{{else}}Currents not evaluated: il_a is not set.{{end}}
Coverage: the week's 10 min values {{cov .Result.Week.Coverage}}; a day or the week needs {{cov .Result.MinCoverage}}.</p>
<table class="lines"><tr><th class="l">channel</th><th class="l">quantity</th><th class="l">statistic</th><th>value %</th><th>limit × mult</th><th>threshold %</th><th>margin</th><th class="l">worst day</th><th>coverage</th><th class="l">verdict</th></tr>
{{range .Lines}}<tr class="line"><td>{{.Channel}}</td><td class="l">{{.Quantity}}</td><td class="l">{{.Statistic}}</td><td>{{pct .Value}}</td><td>{{num .Limit 2}}×{{num .Multiplier 1}}</td><td>{{num .Threshold 2}}</td><td>{{margin .}}</td><td class="l">{{worst $.Result .}}</td><td>{{cov .Coverage}}</td><td class="l {{cls .Verdict}}">{{.Verdict}}</td></tr>
{{end}}</table>
<p class="note">{{.HiddenNote}} Margin = threshold − value (share of the threshold still free); negative means over.</p>

<h2>Spectra: the statistic that counts, per order, against the limits</h2>
<p class="note">{{.SpectraNote}}</p>
<div class="charts">{{range .Spectra}}<figure><figcaption>{{.Title}}</figcaption>{{bars .}}</figure>{{end}}</div>
<p class="note"><span class="key"><i style="background:#1f6f99"></i>value</span><span class="key"><i style="background:#b5262e"></i>limit, and values at or over it</span></p>

<h2 class="pb">The week</h2>
<div class="charts">{{range .Trends}}<figure><figcaption>{{.Title}} ({{.Unit}})</figcaption>{{trend .}}<div>{{legend .}}</div></figure>{{end}}</div>

<h2>Energy and demand</h2>
<table>{{range .Energy}}<tr><td class="wrap">{{.Label}}</td><td>{{.Value}}</td></tr>{{end}}</table>
<p class="note">{{.EnergyNote}}</p>

<h2>Harmonic diagnostics</h2>
<h3>Direction of each current harmonic's active power (10 min values)</h3>
<p class="note">P<sub>h</sub> = Σ V<sub>h</sub>·I<sub>h</sub>·cos(θ<sub>v</sub> − θ<sub>i</sub>) over the phases, current into the cabinet. Negative: the cabinet is the source of that order (it injects it, as drive front ends do for their characteristic orders); positive: the order comes from the supply and is absorbed here. Orders below 0.5 % of the fundamental are left out; their angles carry little.</p>
<table><tr><th>order</th><th>mean I<sub>h</sub> %</th><th>mean P<sub>h</sub> W</th><th>values injecting</th><th>absorbing</th><th class="l">the cabinet</th></tr>
{{range .Directions}}{{if ge .MeanIPct 0.5}}<tr class="dir"><td>{{.H}}</td><td>{{num .MeanIPct 2}}</td><td>{{num .MeanW 1}}</td><td>{{.Injects}}</td><td>{{.Absorbs}}</td><td class="l">{{.Verdict}}</td></tr>{{end}}{{end}}</table>
<h3>Reactor and filter ageing: TDD at comparable load, week by week</h3>
{{with .Ageing}}{{if .Bins}}<p class="note">Mean phase TDD (%) of the 10 min values per week and load bin (mean fundamental phase current, % of {{.Basis}} = {{num .RefA 0}} A); a bin needs 24 values in a week, fewer show their count in brackets. In the best-filled bin ({{.Best}}–{{upper .Best}} %) TDD moved {{num .Trend 2}} points from its first to its last week{{if gt .Trend 0.5}}: a rise at the same load, worth checking the reactors and filters{{end}}.</p>
<table><tr><th class="l">week from</th>{{range .Bins}}<th>{{.}}–{{upper .}} %</th>{{end}}</tr>
{{$t := .}}{{range $w, $_ := .TDD}}<tr class="age"><td>{{week $t $w}}</td>{{range $j, $_ := $t.Bins}}<td{{if hi $t $j}} class="hi"{{end}}>{{cell $t $w $j}}</td>{{end}}</tr>{{end}}</table>
{{else}}<p class="note">No 10 min values with TDD stored (il_a and current channels are needed).</p>{{end}}{{end}}

<h2>Voltage events</h2>
{{if .Events}}<table><tr><th class="l">start</th><th class="l">event</th><th>duration s</th><th>extreme %</th><th class="l">channels</th></tr>
{{range .Events}}<tr><td>{{stamp .Start}}</td><td class="l">{{.Kind}}</td><td>{{num .DurationS 3}}</td><td>{{num .ExtremePct 1}}</td><td class="l">{{.Channels}}</td></tr>{{end}}</table>
{{else}}<p class="note">None listed: {{.EventsNote}}</p>{{end}}

<h2>Notes</h2>
<ul class="note">{{range .Result.Notes}}<li>{{.}}</li>{{end}}</ul>
</body></html>
`
