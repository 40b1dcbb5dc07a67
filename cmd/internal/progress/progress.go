package progress

import (
	"io"
	"strconv"
	"time"
	"unicode/utf8"
)

// Every is the least time between two redraws.
const Every = 200 * time.Millisecond

// barCells is the bar's width in characters; the whole line stays under 80
// columns for a name of up to maxName characters.
const (
	barCells = 20
	maxName  = 24
)

const mib = 1 << 20

// Line counts bytes toward a known total and redraws itself on w. Use it
// from one goroutine.
type Line struct {
	w       io.Writer
	name    string
	total   int64
	done    int64
	now     func() time.Time
	start   time.Time
	last    time.Time // last redraw; zero before the first
	width   int       // characters of the line last drawn
	buf     []byte
	written bool // something is on the terminal line
}

// New returns a line for total bytes named name (shortened to maxName
// characters with an ellipsis). now is the clock (nil = time.Now).
func New(w io.Writer, name string, total int64, now func() time.Time) *Line {
	if now == nil {
		now = time.Now
	}
	if utf8.RuneCountInString(name) > maxName {
		r := []rune(name)
		name = string(r[:maxName-1]) + "…"
	}
	return &Line{w: w, name: name, total: total, now: now, start: now(), buf: make([]byte, 0, 128)}
}

// Write counts len(p) bytes read and redraws when Every has passed since
// the last redraw (or on the first write). It never returns an error: a
// terminal that cannot be written must not stop the replay.
func (l *Line) Write(p []byte) (int, error) {
	l.done += int64(len(p))
	if t := l.now(); l.last.IsZero() || t.Sub(l.last) >= Every {
		l.last = t
		l.draw(t)
	}
	return len(p), nil
}

// Finish clears the line, leaving the cursor at its start.
func (l *Line) Finish() {
	if !l.written {
		return
	}
	b := append(l.buf[:0], '\r')
	for range l.width {
		b = append(b, ' ')
	}
	b = append(b, '\r')
	_, _ = l.w.Write(b)
	l.buf, l.written = b, false
}

// render appends the line's text (without the carriage return) for done
// bytes at time t.
func (l *Line) render(b []byte, t time.Time) []byte {
	frac := 0.0
	if l.total > 0 {
		frac = min(1, float64(l.done)/float64(l.total))
	}
	b = append(b, "replay "...)
	b = append(b, l.name...)
	b = append(b, ' ')
	pct := int(frac * 100)
	switch { // right-align the percentage in three columns
	case pct < 10:
		b = append(b, "  "...)
	case pct < 100:
		b = append(b, ' ')
	}
	b = strconv.AppendInt(b, int64(pct), 10)
	b = append(b, "% ["...)
	cells := int(frac * barCells)
	for i := range barCells {
		if i < cells {
			b = append(b, '#')
		} else {
			b = append(b, ' ')
		}
	}
	b = append(b, "] "...)
	b = strconv.AppendFloat(b, float64(l.done)/mib, 'f', 1, 64)
	b = append(b, '/')
	b = strconv.AppendFloat(b, float64(l.total)/mib, 'f', 1, 64)
	b = append(b, " MiB"...)
	// The rate and time left wait for Every of reading: the first read
	// alone would give a wild rate.
	if el := t.Sub(l.start).Seconds(); el >= Every.Seconds() && l.done > 0 {
		rate := float64(l.done) / el
		b = append(b, ", "...)
		b = strconv.AppendFloat(b, rate/mib, 'f', 1, 64)
		b = append(b, " MiB/s, "...)
		left := float64(l.total-l.done) / rate
		b = strconv.AppendInt(b, int64(max(0, left)+0.5), 10)
		b = append(b, " s left"...)
	}
	return b
}

// draw writes the line over the previous one, padding with blanks where
// the previous was longer.
func (l *Line) draw(t time.Time) {
	b := append(l.buf[:0], '\r')
	b = l.render(b, t)
	n := utf8.RuneCount(b) - 1
	for i := n; i < l.width; i++ {
		b = append(b, ' ')
	}
	l.width = n
	_, _ = l.w.Write(b)
	l.buf, l.written = b, true
}
