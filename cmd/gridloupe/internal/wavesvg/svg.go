package wavesvg

import (
	"bytes"
	"fmt"
	"html"
	"math"
	"strings"
	"time"

	"github.com/gridloupe/gridloupe/metrics/events"
	"github.com/gridloupe/gridloupe/store"
)

// Geometry (px). 900 wide scales down to a phone's width and stays legible.
const (
	width   = 900
	left    = 78
	right   = 24
	top     = 86
	panelH  = 190
	gap     = 46
	bottomM = 84
)

// colours of the channels in order (our own choice).
var colours = []string{"#1c5fb8", "#c4411b", "#23823a", "#7a3fc9", "#9a6b00", "#0b7f86"}

// panel is one plot area with its y range.
type panel struct {
	y0     float64 // top, px
	lo, hi float64
	unit   string
	title  string
}

func (p panel) y(v float64) float64 { return p.y0 + panelH*(1-(v-p.lo)/(p.hi-p.lo)) }

// Draw returns the SVG of w for event r. site titles it; caution is a
// line of safety text printed at the foot.
func Draw(w *store.Waveform, r *events.Record, site, caution string) []byte {
	frames := 0
	if len(w.Samples) > 0 {
		frames = len(w.Samples[0])
	}
	// time axis: ms from the event start
	t0 := float64(w.Start.Sub(r.Start)) / float64(time.Millisecond)
	t1 := t0 + float64(frames)/w.SampleRate*1000
	x := func(ms float64) float64 { return left + (width-left-right)*(ms-t0)/(t1-t0) }
	var volts, amps []int
	for c, ch := range w.Channels {
		if ch.Voltage {
			volts = append(volts, c)
		} else {
			amps = append(amps, c)
		}
	}
	npanels := 2
	if len(amps) > 0 {
		npanels = 3
	}
	height := top + npanels*panelH + (npanels-1)*gap + bottomM
	var b bytes.Buffer
	fmt.Fprintf(&b, `<svg xmlns="http://www.w3.org/2000/svg" width="%d" height="%d" viewBox="0 0 %d %d" font-family="sans-serif" font-size="15">`+"\n", width, height, width, height)
	fmt.Fprintf(&b, `<rect width="100%%" height="100%%" fill="#ffffff"/>`+"\n")
	title := fmt.Sprintf("%s · %s · %s UTC", site, strings.ToUpper(r.Kind.String()[:1])+r.Kind.String()[1:], r.Start.UTC().Format("2006-01-02 15:04:05.000"))
	ext := "residual"
	if r.Kind == events.Swell {
		ext = "maximum"
	}
	sub := fmt.Sprintf("%.0f ms · %s %.1f V (%.1f %% of %.0f V) on %s · channels %s", r.DurationS*1000, ext, r.ExtremeV, r.ExtremePct, w.DeclaredV, r.Worst, strings.Join(r.Channels, ", "))
	if r.Unfinished {
		sub += " · still open when the capture ended"
	}
	if r.WaveformCut {
		sub += " · capture cut at max_capture_s"
	}
	fmt.Fprintf(&b, `<text x="%d" y="30" font-size="21" font-weight="bold">%s</text>`+"\n", left, esc(title))
	fmt.Fprintf(&b, `<text x="%d" y="56" font-size="16">%s</text>`+"\n", left, esc(sub))

	// panel 1: voltage samples
	vmax := peak(w, volts)
	pv := panel{y0: top, lo: -vmax, hi: vmax, unit: "V", title: "voltage samples"}
	// panel 2: Urms(1/2)
	ur := make([][]point, len(volts))
	uhi := w.DeclaredV * math.Max(1.2, w.SwellPct/100+0.08)
	for i, c := range volts {
		ur[i] = halfCycleRMS(w.Samples[c], w.SampleRate, w.NominalHz, t0)
		for _, p := range ur[i] {
			uhi = math.Max(uhi, p.v*1.05)
		}
	}
	pu := panel{y0: top + panelH + gap, lo: 0, hi: uhi, unit: "V", title: "Urms(½): one-cycle RMS every half cycle"}
	panels := []panel{pv, pu}
	if len(amps) > 0 {
		amax := peak(w, amps)
		panels = append(panels, panel{y0: top + 2*(panelH+gap), lo: -amax, hi: amax, unit: "A", title: "current samples"})
	}
	evEnd := r.DurationS * 1000
	for _, p := range panels {
		// event span shading
		xa, xb := math.Max(x(0), left), math.Min(x(evEnd), width-right)
		fmt.Fprintf(&b, `<rect x="%.1f" y="%.1f" width="%.1f" height="%d" fill="#f2e6c9"/>`+"\n", xa, p.y0, math.Max(xb-xa, 1), panelH)
		fmt.Fprintf(&b, `<rect x="%d" y="%.1f" width="%d" height="%d" fill="none" stroke="#555" stroke-width="1"/>`+"\n", left, p.y0, width-left-right, panelH)
		fmt.Fprintf(&b, `<text x="%d" y="%.1f" font-weight="bold">%s (%s)</text>`+"\n", left, p.y0-8, esc(p.title), p.unit)
		for _, v := range ticks(p.lo, p.hi, 4) {
			fmt.Fprintf(&b, `<line x1="%d" x2="%d" y1="%.1f" y2="%.1f" stroke="#ddd"/>`, left, width-right, p.y(v), p.y(v))
			fmt.Fprintf(&b, `<text x="%d" y="%.1f" text-anchor="end" font-size="13">%s</text>`+"\n", left-6, p.y(v)+4, num(v))
		}
	}
	// x ticks under the last panel, grid through all
	last := panels[len(panels)-1]
	for _, ms := range ticks(t0, t1, 8) {
		for _, p := range panels {
			fmt.Fprintf(&b, `<line x1="%.1f" x2="%.1f" y1="%.1f" y2="%.1f" stroke="#e6e6e6"/>`, x(ms), x(ms), p.y0, p.y0+panelH)
		}
		fmt.Fprintf(&b, `<text x="%.1f" y="%.1f" text-anchor="middle" font-size="13">%s</text>`+"\n", x(ms), last.y0+panelH+18, num(ms))
	}
	fmt.Fprintf(&b, `<text x="%d" y="%.1f" text-anchor="middle">time from the event start (ms); shaded: the event</text>`+"\n", (left+width-right)/2, last.y0+panelH+40)

	// traces
	for i, c := range volts {
		trace(&b, w.Samples[c], x, t0, w.SampleRate, pv, colours[i%len(colours)])
	}
	for i, c := range amps {
		trace(&b, w.Samples[c], x, t0, w.SampleRate, panels[2], colours[(len(volts)+i)%len(colours)])
	}
	// threshold lines
	// threshold (solid) and hysteresis end (dashed) lines; each pair
	// shares one label: the swell's above its lines, the dip's and the
	// interruption's below theirs
	type line struct {
		pct, endPct float64
		label       string
		above       bool
	}
	lines := []line{{w.SwellPct, w.SwellPct - w.HystPct, fmt.Sprintf("swell %g %% · ends below %g %%", w.SwellPct, w.SwellPct-w.HystPct), true},
		{w.DipPct, w.DipPct + w.HystPct, fmt.Sprintf("dip %g %% · ends at %g %%", w.DipPct, w.DipPct+w.HystPct), false},
		{w.IntPct, w.IntPct + w.HystPct, fmt.Sprintf("interruption %g %%", w.IntPct), true}}
	for _, l := range lines {
		v, ve := l.pct/100*w.DeclaredV, l.endPct/100*w.DeclaredV
		if v > pu.hi {
			continue
		}
		fmt.Fprintf(&b, `<line x1="%d" x2="%d" y1="%.1f" y2="%.1f" stroke="#8a1c1c" stroke-width="1.3"/>`, left, width-right, pu.y(v), pu.y(v))
		if l.label[0] != 'i' {
			fmt.Fprintf(&b, `<line x1="%d" x2="%d" y1="%.1f" y2="%.1f" stroke="#8a1c1c" stroke-width="1.1" stroke-dasharray="6 4"/>`, left, width-right, pu.y(ve), pu.y(ve))
		}
		ly := math.Max(pu.y(v), pu.y(ve)) + 15
		if l.above {
			ly = math.Min(pu.y(v), pu.y(ve)) - 5
		}
		fmt.Fprintf(&b, `<text x="%d" y="%.1f" text-anchor="end" font-size="13" fill="#8a1c1c">%s</text>`+"\n", width-right-6, ly, esc(l.label))
	}
	for i, pts := range ur {
		var sb strings.Builder
		for _, p := range pts {
			fmt.Fprintf(&sb, "%.1f,%.1f ", x(p.ms), pu.y(p.v))
		}
		fmt.Fprintf(&b, `<polyline fill="none" stroke="%s" stroke-width="2.2" points="%s"/>`+"\n", colours[i%len(colours)], sb.String())
	}
	// legend, right-aligned on the first panel's title line
	all := append(append([]int(nil), volts...), amps...)
	lx := float64(width - right)
	for _, c := range all {
		lx -= 30 + 9*float64(len(w.Channels[c].Name))
	}
	for i, c := range all {
		fmt.Fprintf(&b, `<rect x="%.0f" y="%d" width="16" height="5" fill="%s"/><text x="%.0f" y="%d" font-size="14">%s</text>`, lx, top-14, colours[i%len(colours)], lx+20, top-8, esc(w.Channels[c].Name))
		lx += 30 + 9*float64(len(w.Channels[c].Name))
	}
	fmt.Fprintf(&b, "\n"+`<text x="%d" y="%d" font-size="12" fill="#555">%s</text>`+"\n", left, height-12, esc(caution))
	b.WriteString("</svg>\n")
	return b.Bytes()
}

type point struct{ ms, v float64 }

// halfCycleRMS recomputes Urms(1/2) from the stored samples at nominal
// cycles: the RMS of each cycle, every half cycle, placed at the cycle's end.
func halfCycleRMS(s []float32, fs, f, t0 float64) []point {
	if !(f > 0) {
		f = 50
	}
	h := fs / (2 * f)
	var out []point
	for k := 0; ; k++ {
		a, e := int(math.Round(float64(k)*h)), int(math.Round(float64(k+2)*h))
		if e > len(s) {
			return out
		}
		ss, n := 0.0, 0
		for _, v := range s[a:e] {
			if v == v {
				ss += float64(v) * float64(v)
				n++
			}
		}
		if n == e-a && n > 0 {
			out = append(out, point{t0 + float64(e)/fs*1000, math.Sqrt(ss / float64(n))})
		}
	}
}

// trace draws s with a min/max per pixel column, so every peak survives
// however many samples a column holds.
func trace(b *bytes.Buffer, s []float32, x func(float64) float64, t0, fs float64, p panel, colour string) {
	cols := width - left - right
	var sb strings.Builder
	n := len(s)
	for col := range cols {
		a, e := col*n/cols, (col+1)*n/cols
		if e <= a {
			continue
		}
		lo, hi := math.Inf(1), math.Inf(-1)
		for _, v := range s[a:e] {
			if v == v {
				lo, hi = math.Min(lo, float64(v)), math.Max(hi, float64(v))
			}
		}
		if math.IsInf(lo, 1) {
			continue
		}
		xx := x(t0 + float64(a)/fs*1000)
		fmt.Fprintf(&sb, "%.1f,%.1f %.1f,%.1f ", xx, p.y(hi), xx, p.y(lo))
	}
	fmt.Fprintf(b, `<polyline fill="none" stroke="%s" stroke-width="1.4" points="%s"/>`+"\n", colour, sb.String())
}

func peak(w *store.Waveform, chans []int) float64 {
	m := 0.0
	for _, c := range chans {
		for _, v := range w.Samples[c] {
			if v == v {
				m = math.Max(m, math.Abs(float64(v)))
			}
		}
	}
	if m == 0 {
		return 1
	}
	return m * 1.08
}

// ticks returns round values across [lo, hi], about n of them.
func ticks(lo, hi float64, n int) []float64 {
	step := math.Pow(10, math.Floor(math.Log10((hi-lo)/float64(n))))
	for _, m := range []float64{1, 2, 5, 10} {
		if (hi-lo)/(step*m) <= float64(n) {
			step *= m
			break
		}
	}
	var out []float64
	for v := math.Ceil(lo/step) * step; v <= hi+1e-9; v += step {
		out = append(out, v)
	}
	return out
}

func num(v float64) string {
	if math.Abs(v) < 1e-9 {
		return "0"
	}
	return fmt.Sprintf("%g", math.Round(v*10)/10)
}

func esc(s string) string { return html.EscapeString(s) }
