package report

import (
	"fmt"
	"html"
	"html/template"
	"math"
	"strings"
	"time"
)

// Bars is one channel's per-order statistic against its limits.
type Bars struct {
	Title  string
	Orders []int
	Values []float64 // NaN = no value
	Limits []float64 // NaN or 0 = no limit
	Unit   string
}

// Series is one line of a trend chart.
type Series struct {
	Name   string
	Times  []time.Time
	Values []float64 // NaN = gap
}

// Trend is one chart of the week.
type Trend struct {
	Title  string
	Unit   string
	Series []Series
	Limit  float64 // NaN = none
	From   time.Time
	To     time.Time
}

// palette: our own colours, distinct in print and for common colour
// vision deficiencies (blue, orange, green, purple).
var palette = []string{"#1f6f99", "#d0781c", "#3b8a3e", "#7a4f9a"}

const limitColour = "#b5262e"

func esc(s string) string { return html.EscapeString(s) }

func niceTop(v float64) float64 {
	if !(v > 0) {
		return 1
	}
	p := math.Pow(10, math.Floor(math.Log10(v)))
	for _, m := range []float64{1, 2, 2.5, 5, 10} {
		if m*p >= v {
			return m * p
		}
	}
	return 10 * p
}

// barSVG draws b as bars with limit ticks; a bar at or over its limit is
// drawn in the limit colour.
func barSVG(b Bars) template.HTML {
	const W, H, x0, y0 = 520.0, 130.0, 34.0, 8.0
	top := 0.0
	for i := range b.Orders {
		if v := b.Values[i]; !math.IsNaN(v) {
			top = math.Max(top, v)
		}
		if l := b.Limits[i]; l > 0 {
			top = math.Max(top, l)
		}
	}
	top = niceTop(top * 1.05)
	n := float64(len(b.Orders))
	bw := (W - x0 - 4) / math.Max(n, 1)
	y := func(v float64) float64 { return y0 + H*(1-v/top) }
	var sb strings.Builder
	fmt.Fprintf(&sb, `<svg class="bars" viewBox="0 0 %.0f %.0f" role="img" aria-label="%s">`, W, H+y0+18, esc(b.Title))
	for _, g := range []float64{0, top / 2, top} {
		fmt.Fprintf(&sb, `<line x1="%.0f" x2="%.0f" y1="%.1f" y2="%.1f" class="grid"/><text x="%.0f" y="%.1f" class="ax" text-anchor="end">%s</text>`,
			x0, W, y(g), y(g), x0-3, y(g)+3, trim(g))
	}
	for i, h := range b.Orders {
		x := x0 + float64(i)*bw
		if v := b.Values[i]; !math.IsNaN(v) {
			col := palette[0]
			if l := b.Limits[i]; l > 0 && v >= l {
				col = limitColour
			}
			fmt.Fprintf(&sb, `<rect class="bar" x="%.1f" y="%.1f" width="%.1f" height="%.1f" fill="%s"/>`, x+0.6, y(v), math.Max(bw-1.2, 0.5), math.Max(y0+H-y(v), 0.4), col)
		}
		if l := b.Limits[i]; l > 0 {
			fmt.Fprintf(&sb, `<line class="limit" x1="%.1f" x2="%.1f" y1="%.1f" y2="%.1f" stroke="%s" stroke-width="1.6"/>`, x, x+bw, y(l), y(l), limitColour)
		}
		if h == 2 || h%5 == 0 {
			fmt.Fprintf(&sb, `<text x="%.1f" y="%.1f" class="ax" text-anchor="middle">%d</text>`, x+bw/2, y0+H+12, h)
		}
	}
	sb.WriteString(`</svg>`)
	return template.HTML(sb.String())
}

func trim(v float64) string {
	s := fmt.Sprintf("%.2f", v)
	s = strings.TrimRight(strings.TrimRight(s, "0"), ".")
	return s
}

// lineSVG draws the series of t over its week with day ticks.
func lineSVG(t Trend) template.HTML {
	const W, H, x0, y0 = 520.0, 120.0, 40.0, 8.0
	lo, hi := math.Inf(1), math.Inf(-1)
	for _, s := range t.Series {
		for _, v := range s.Values {
			if !math.IsNaN(v) {
				lo, hi = math.Min(lo, v), math.Max(hi, v)
			}
		}
	}
	if !math.IsNaN(t.Limit) {
		lo, hi = math.Min(lo, t.Limit), math.Max(hi, t.Limit)
	}
	if math.IsInf(lo, 0) {
		lo, hi = 0, 1
	}
	if hi-lo < 1e-9 {
		lo, hi = lo-0.5, hi+0.5
	}
	pad := (hi - lo) * 0.08
	lo, hi = lo-pad, hi+pad
	span := t.To.Sub(t.From).Seconds()
	x := func(tm time.Time) float64 { return x0 + (W-x0-4)*tm.Sub(t.From).Seconds()/span }
	y := func(v float64) float64 { return y0 + H*(hi-v)/(hi-lo) }
	var sb strings.Builder
	fmt.Fprintf(&sb, `<svg class="trend" viewBox="0 0 %.0f %.0f" role="img" aria-label="%s">`, W, H+y0+18, esc(t.Title))
	for _, g := range []float64{lo + pad, (lo + hi) / 2, hi - pad} {
		fmt.Fprintf(&sb, `<line x1="%.0f" x2="%.0f" y1="%.1f" y2="%.1f" class="grid"/><text x="%.0f" y="%.1f" class="ax" text-anchor="end">%s</text>`,
			x0, W, y(g), y(g), x0-3, y(g)+3, fmt.Sprintf("%.3g", g))
	}
	for d := t.From; !d.After(t.To); d = d.Add(24 * time.Hour) {
		fmt.Fprintf(&sb, `<line x1="%.1f" x2="%.1f" y1="%.0f" y2="%.0f" class="grid"/>`, x(d), x(d), y0, y0+H)
		if d.Before(t.To) {
			fmt.Fprintf(&sb, `<text x="%.1f" y="%.0f" class="ax">%s</text>`, x(d)+2, y0+H+12, d.Format("Mon 02"))
		}
	}
	if !math.IsNaN(t.Limit) {
		fmt.Fprintf(&sb, `<line class="limit" x1="%.0f" x2="%.0f" y1="%.1f" y2="%.1f" stroke="%s" stroke-dasharray="5 3" stroke-width="1.4"/>`, x0, W, y(t.Limit), y(t.Limit), limitColour)
	}
	for si, s := range t.Series {
		col := palette[si%len(palette)]
		var path strings.Builder
		pen := false
		for i, tm := range s.Times {
			v := s.Values[i]
			if math.IsNaN(v) || (i > 0 && tm.Sub(s.Times[i-1]) > 25*time.Minute) {
				pen = false
			}
			if math.IsNaN(v) {
				continue
			}
			if pen {
				fmt.Fprintf(&path, "L%.1f %.1f", x(tm), y(v))
			} else {
				fmt.Fprintf(&path, "M%.1f %.1f", x(tm), y(v))
				pen = true
			}
		}
		fmt.Fprintf(&sb, `<path class="line" d="%s" fill="none" stroke="%s" stroke-width="1.1"/>`, path.String(), col)
	}
	sb.WriteString(`</svg>`)
	return template.HTML(sb.String())
}

// legend returns the HTML legend of t's series.
func legend(t Trend) template.HTML {
	var sb strings.Builder
	for i, s := range t.Series {
		fmt.Fprintf(&sb, `<span class="key"><i style="background:%s"></i>%s</span>`, palette[i%len(palette)], esc(s.Name))
	}
	if !math.IsNaN(t.Limit) {
		fmt.Fprintf(&sb, `<span class="key"><i style="background:%s"></i>limit %s %s</span>`, limitColour, trim(t.Limit), esc(t.Unit))
	}
	return template.HTML(sb.String())
}
