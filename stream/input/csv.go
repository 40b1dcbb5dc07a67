package input

import (
	"bufio"
	"bytes"
	"errors"
	"fmt"
	"io"
	"math"
	"strconv"
	"strings"
	"unsafe"
)

const (
	// csvBufSize is the bufio buffer of a CSV reader and so the longest line
	// accepted. Memory stays constant however long the file.
	csvBufSize = 64 << 10
	// maxPreRows caps the rows held to find the sample rate from the t
	// column: a full second up to 65.536 kHz; above that the rate comes from
	// fewer than a second of rows, which the t resolution still allows.
	maxPreRows = 1 << 16
	// timeColumn is the name of the optional first column, in seconds.
	timeColumn = "t"
	// maxCellQuote is how much of a bad cell an error message quotes.
	maxCellQuote = 40
)

// Values of CSV.chOf besides a channel index.
const (
	colSkip = -1 // an extra column: not parsed
	colTime = -2 // the t column
)

var utf8BOM = []byte{0xEF, 0xBB, 0xBF}

// CSV reads a comma-separated recording: `#` comment lines anywhere, one
// header row of column names, an optional first column t (seconds), then one
// row per sample. Cells use '.' decimals and may be padded with blanks; empty
// lines are skipped and CRLF line ends are accepted. NaN, Inf and -Inf cells
// are delivered as such (the pipeline flags them).
//
// Memory is constant: one fixed bufio buffer, plus, with a t column, up to
// one second of rows held at the start to find the sample rate (released once
// delivered). A CSV is not safe for concurrent use.
type CSV struct {
	path  string
	br    *bufio.Reader
	cols  []string // header names in file order
	chOf  []int    // per column: index in want, colSkip or colTime
	nch   int
	extra []string
	hasT  bool

	// Sample rate from t and the uniformity check.
	fs    float64
	t0    float64
	t0Res float64 // printed resolution of the first t, s
	rel   float64 // relative uncertainty of fs (0 when snapped to an integer)

	parsed  uint64 // data rows parsed so far (sample index of the next row)
	lineNo  int64  // lines read so far
	readOff int64  // bytes read so far (whole lines)
	line    int64  // line of the last row delivered
	off     int64  // offset just past the last row delivered

	// Rows held while finding the sample rate, delivered first.
	pre     []float64
	preLine []int64
	preEnd  []int64
	prePos  int
	preDone bool
	pending error // error that ended the held rows, returned after them

	err error // sticky
}

// NewCSV reads the comment lines and header row of a CSV recording from r and
// maps the channels named in want to columns; frames come in want order. path
// is used only in messages. Columns not in want (other than t) are allowed and
// listed by Extra.
//
// NewCSV also reads the first data row, so that a decimal comma (visible only
// there) is a header error. With a first column named t it reads up to one
// second of rows (at most 65536) to find the sample rate, (n−1)/span, rounded
// to the nearest integer hertz when that lies within the resolution of the
// printed t values. Every row's t must then stay on the grid t0 + i/fs within
// half a sample period, widened by half the printed resolution of t (and, for
// a rate not rounded to an integer, by the uncertainty of the estimate times
// i/fs): without that widening a t column printed to 0.1 ms could never pass
// at 10 kHz. In the first second each step between rows is checked as well,
// so that a missing row there is reported at its own line. A t off the grid
// is a *DataError from ReadFrames after the rows before it.
//
// Header faults return a *HeaderError: no header row, a column without a
// name, a duplicate column, a missing channel column (named, with the columns
// found), a separator other than ',' or a decimal comma.
func NewCSV(path string, r io.Reader, want []string) (*CSV, error) {
	if r == nil {
		return nil, fmt.Errorf("%s: input: nil reader", path)
	}
	c := &CSV{path: path, br: bufio.NewReaderSize(r, csvBufSize), nch: len(want)}
	if err := c.readHeader(want); err != nil {
		return nil, err
	}
	if err := c.hold(); err != nil {
		return nil, err
	}
	return c, nil
}

// Channels returns the number of channels in a frame: len(want).
func (c *CSV) Channels() int { return c.nch }

// SampleRate returns the rate found from the t column in hertz; 0 when there
// is no t column or fewer than two rows.
func (c *CSV) SampleRate() float64 { return c.fs }

// Extra returns the header columns that are neither t nor a wanted channel,
// in file order, so that the caller can warn once.
func (c *CSV) Extra() []string { return c.extra }

// Line returns the line number of the last row delivered (0 before the first).
// It saturates at math.MaxInt on 32-bit platforms.
func (c *CSV) Line() int { return clampInt(c.line) }

// Offset returns the byte offset just past the last row delivered (the
// header and comments before it included).
func (c *CSV) Offset() int64 { return c.off }

// ReadFrames fills dst with up to len(dst)/Channels() frames in want order.
// As with io.Reader, frames > 0 may come with an error; io.EOF means no more
// data. A non-numeric cell or a row of the wrong width returns a *DataError,
// a final row cut short an error wrapping ErrTruncated; errors are sticky.
// A dst shorter than one frame returns io.ErrShortBuffer.
func (c *CSV) ReadFrames(dst []float64) (int, error) {
	if len(dst) == 0 {
		return 0, nil
	}
	room := len(dst) / c.nch
	if room == 0 {
		return 0, io.ErrShortBuffer
	}
	n := 0
	if !c.preDone {
		for n < room && c.prePos < len(c.preLine) {
			copy(dst[n*c.nch:(n+1)*c.nch], c.pre[c.prePos*c.nch:])
			c.line, c.off = c.preLine[c.prePos], c.preEnd[c.prePos]
			c.prePos++
			n++
		}
		if c.prePos == len(c.preLine) {
			c.pre, c.preLine, c.preEnd = nil, nil, nil
			c.preDone = true
			c.err, c.pending = c.pending, nil
		}
	}
	for n < room && c.err == nil {
		if err := c.readRow(dst[n*c.nch : (n+1)*c.nch]); err != nil {
			c.err = err
			break
		}
		n++
	}
	return n, c.err
}

// readRow parses the next data row into frame and checks its t.
func (c *CSV) readRow(frame []float64) error {
	t, res, err := c.parseRow(frame)
	if err != nil {
		return err
	}
	if c.hasT && c.fs > 0 {
		if err := c.checkT(c.parsed-1, t, res, c.lineNo); err != nil {
			return err
		}
	}
	c.line, c.off = c.lineNo, c.readOff
	return nil
}

// readHeader reads up to the header row and maps want to its columns.
func (c *CSV) readHeader(want []string) error {
	if len(want) == 0 {
		return &HeaderError{File: c.path, Line: 1, Msg: "no channels requested"}
	}
	b, _, err := c.nextLine()
	if err == io.EOF {
		return &HeaderError{File: c.path, Line: clampInt(max(c.lineNo, 1)),
			Msg: "no header row: the file is empty or holds only comments"}
	}
	var de *DataError
	if errors.As(err, &de) {
		return &HeaderError{File: c.path, Line: de.Line, Msg: de.Msg}
	}
	if err != nil {
		return err
	}
	at, err := c.parseHeader(b)
	if err != nil {
		return err
	}
	if err := c.mapChannels(want, at); err != nil {
		return err
	}
	c.line, c.off = c.lineNo, c.readOff
	return nil
}

// headerErr returns the HeaderError of the header row (the line just read)
// at column col (1-based; 0 = the whole row).
func (c *CSV) headerErr(col int, format string, a ...any) error {
	return &HeaderError{File: c.path, Line: clampInt(c.lineNo), Col: col, Msg: fmt.Sprintf(format, a...)}
}

// parseHeader splits the header row b into c.cols (names trimmed of blanks
// and of one pair of double quotes) and returns each name's column index.
// It refuses bare CRs, ';' or tab separators, empty or duplicate names.
func (c *CSV) parseHeader(b []byte) (map[string]int, error) {
	if i := bytes.IndexByte(b, '\r'); i >= 0 {
		return nil, c.headerErr(0, "bare carriage return (CR) inside the line: use LF or CRLF line ends")
	}
	if bytes.IndexByte(b, ',') < 0 {
		if i := bytes.IndexByte(b, ';'); i >= 0 {
			return nil, c.headerErr(0, "header row is separated by ';': comma-separated only, with '.' decimals")
		}
		if i := bytes.IndexByte(b, '\t'); i >= 0 {
			return nil, c.headerErr(0, "header row is separated by tabs: comma-separated only, with '.' decimals")
		}
	}
	fields := strings.Split(string(b), ",")
	c.cols = make([]string, len(fields))
	named := false
	for i, f := range fields {
		f = strings.Trim(f, " \t")
		if len(f) >= 2 && f[0] == '"' && f[len(f)-1] == '"' {
			f = strings.Trim(f[1:len(f)-1], " \t")
		}
		c.cols[i] = f
		named = named || f != ""
	}
	if !named {
		return nil, c.headerErr(0, "empty header: the header row holds no column names")
	}
	at := make(map[string]int, len(c.cols))
	for i, name := range c.cols {
		switch {
		case name == "":
			return nil, c.headerErr(i+1, "column %d has no name", i+1)
		case strings.ContainsAny(name, ";\t"):
			return nil, c.headerErr(i+1, "column name %q holds ';' or a tab: comma-separated only, with '.' decimals", name)
		}
		if j, dup := at[name]; dup {
			return nil, c.headerErr(i+1, "column %q appears twice (columns %d and %d)", name, j+1, i+1)
		}
		at[name] = i
	}
	return at, nil
}

// mapChannels sets c.hasT, c.chOf (each column's channel index, colTime or
// colSkip) and c.extra (the unrequested columns) from the requested channels
// want and the header's column indices at. A missing channel's error lists
// the columns found and a hint.
func (c *CSV) mapChannels(want []string, at map[string]int) error {
	c.hasT = c.cols[0] == timeColumn
	c.chOf = make([]int, len(c.cols))
	for i := range c.chOf {
		c.chOf[i] = colSkip
	}
	if c.hasT {
		c.chOf[0] = colTime
	}
	var missing []string
	for k, name := range want {
		if name == timeColumn && c.hasT {
			return c.headerErr(1, "channel %q: the first column t is the time in seconds and cannot be a channel", name)
		}
		i, ok := at[name]
		if !ok {
			missing = append(missing, name)
			continue
		}
		if c.chOf[i] != colSkip {
			return c.headerErr(i+1, "channel %q is requested twice", name)
		}
		c.chOf[i] = k
	}
	if len(missing) > 0 {
		return c.headerErr(0, "%s (columns found: %s)%s", missingText(missing), strings.Join(c.cols, ", "), headerHint(c.cols, missing))
	}
	for i, k := range c.chOf {
		if k == colSkip {
			c.extra = append(c.extra, c.cols[i])
		}
	}
	return nil
}

// missingText names the channels without a column.
func missingText(missing []string) string {
	q := make([]string, len(missing))
	for i, m := range missing {
		q[i] = strconv.Quote(m)
	}
	if len(q) == 1 {
		return "no column for channel " + q[0]
	}
	return "no column for channels " + strings.Join(q, ", ")
}

// headerHint explains two common causes of a missing column: names differing
// only in case, and a file with no header row at all.
func headerHint(cols, missing []string) string {
	for _, m := range missing {
		for _, col := range cols {
			if strings.EqualFold(m, col) {
				return fmt.Sprintf("; %q differs from %q only in case, and names are case-sensitive", col, m)
			}
		}
	}
	for _, col := range cols {
		if _, err := strconv.ParseFloat(col, 64); err != nil {
			return ""
		}
	}
	return "; the first row is all numbers: is the header row missing?"
}

// hold reads the first data row, so that a header fault only visible there
// (a decimal comma) comes from NewCSV, and with a t column up to a second of
// rows, to find the sample rate from their t and check them for uniformity.
// The rows held are delivered first.
func (c *CSV) hold() error {
	frame := make([]float64, c.nch)
	var ts, res []float64
	for len(ts) < maxPreRows {
		t, r, err := c.parseRow(frame)
		if err != nil {
			c.pending = err
			break
		}
		ts, res = append(ts, t), append(res, r)
		c.pre = append(c.pre, frame...)
		c.preLine = append(c.preLine, c.lineNo)
		c.preEnd = append(c.preEnd, c.readOff)
		if !c.hasT || t-ts[0] >= 1 {
			break
		}
	}
	var he *HeaderError
	if errors.As(c.pending, &he) {
		return c.pending
	}
	n := len(ts)
	if n == 0 && errors.Is(c.pending, io.EOF) {
		return &DataError{File: c.path, Line: clampInt(c.lineNo), Msg: "no data rows after the header: nothing to measure"}
	}
	if !c.hasT {
		return nil
	}
	if n < 2 {
		var de *DataError
		if errors.As(c.pending, &de) {
			return c.pending
		}
		return nil // fs unknown; the rows (if any) are still delivered
	}
	span := ts[n-1] - ts[0]
	if !(span > 0) {
		return &DataError{File: c.path, Line: clampInt(c.preLine[n-1]), Col: 1,
			Msg: fmt.Sprintf("t = %.9g s is not after the first t = %.9g s: t must increase", ts[n-1], ts[0])}
	}
	fs := float64(n-1) / span
	spanErr := 0.5 * (res[0] + res[n-1]) // each end is off by up to half its printed resolution
	band := fs*spanErr/span + fs*1e-12   // fs uncertainty, plus float rounding
	if r := math.Round(fs); r > 0 && math.Abs(fs-r) <= band {
		fs, c.rel = r, 0
	} else {
		c.rel = spanErr / span
	}
	c.fs, c.t0, c.t0Res = fs, ts[0], res[0]
	// A missing row inside the held second skews fs, and the grid check
	// would then fail far from it; a step check first finds the row itself.
	bad := -1
	var err error
	for i := 1; i < n && bad < 0; i++ {
		if err = c.checkStep(ts[i]-ts[i-1], ts[i], res[i-1]+res[i], c.preLine[i]); err != nil {
			bad = i
		}
	}
	for i := 0; i < n && bad < 0; i++ {
		if err = c.checkT(uint64(i), ts[i], res[i], c.preLine[i]); err != nil {
			bad = i
		}
	}
	if bad >= 0 {
		c.pre, c.preLine, c.preEnd = c.pre[:bad*c.nch], c.preLine[:bad], c.preEnd[:bad]
		c.pending = err
	}
	return nil
}

// checkStep reports a step between consecutive t values that is not one
// sample period within half a period (plus the printed resolution).
func (c *CSV) checkStep(dt, t, res float64, line int64) error {
	if math.Abs(dt-1/c.fs) <= 0.5/c.fs+res {
		return nil
	}
	return &DataError{File: c.path, Line: clampInt(line), Col: 1,
		Msg: fmt.Sprintf("t = %.9g s comes %.3g s after the row before, not one sample period (%.3g s at %g Hz); rows missing, repeated or out of order?",
			t, dt, 1/c.fs, c.fs)}
}

// checkT reports a t off the uniform grid t0 + i/fs.
func (c *CSV) checkT(i uint64, t, res float64, line int64) error {
	elapsed := float64(i) / c.fs
	want := c.t0 + elapsed
	tol := 0.5/c.fs + 0.5*res + 0.5*c.t0Res + elapsed*c.rel
	if math.Abs(t-want) <= tol {
		return nil
	}
	return &DataError{File: c.path, Line: clampInt(line), Col: 1,
		Msg: fmt.Sprintf("t = %.9g s is off the uniform time grid: expected %.9g s at %g Hz (tolerance %.2g s); rows missing, repeated or out of order?",
			t, want, c.fs, tol)}
}

// nextLine returns the next line that is neither empty nor a comment, without
// its line end and surrounding blanks. final reports a line ended by EOF
// rather than a newline. At the end it returns io.EOF itself.
func (c *CSV) nextLine() (b []byte, final bool, err error) {
	for {
		raw, rerr := c.br.ReadSlice('\n')
		if rerr == bufio.ErrBufferFull {
			return nil, false, &DataError{File: c.path, Line: clampInt(c.lineNo + 1),
				Msg: fmt.Sprintf("line longer than %d bytes", csvBufSize)}
		}
		if rerr != nil && rerr != io.EOF {
			return nil, false, fmt.Errorf("%s:%d: read: %w", c.path, c.lineNo+1, rerr)
		}
		if len(raw) == 0 {
			return nil, false, io.EOF
		}
		c.lineNo++
		c.readOff += int64(len(raw))
		if c.lineNo == 1 {
			raw = bytes.TrimPrefix(raw, utf8BOM)
		}
		final = rerr == io.EOF
		b = trimLine(raw)
		if len(b) == 0 || b[0] == '#' {
			if final {
				return nil, false, io.EOF
			}
			continue
		}
		return b, final, nil
	}
}

// parseRow reads the next data row: the wanted cells into frame and, with a
// t column, t and the resolution its text is printed to.
func (c *CSV) parseRow(frame []float64) (t, res float64, err error) {
	b, final, err := c.nextLine()
	if err != nil {
		return 0, 0, err
	}
	ncols := len(c.chOf)
	col := 0
	for start := 0; ; col++ {
		end := bytes.IndexByte(b[start:], ',')
		last := end < 0
		if last {
			end = len(b)
		} else {
			end += start
		}
		if col >= ncols {
			return 0, 0, c.widthError(b, final)
		}
		if k := c.chOf[col]; k != colSkip {
			cell := trimBlank(b[start:end])
			v, ok := parseCell(cell)
			switch {
			case !ok && final && last:
				// The recording was cut inside this cell (or right after a comma).
				return 0, 0, fmt.Errorf("%s:%d: last row ends in a cut cell %q: %w", c.path, c.lineNo, clip(cell), ErrTruncated)
			case !ok:
				return 0, 0, c.cellError(col, cell)
			case k == colTime:
				if math.IsNaN(v) || math.IsInf(v, 0) {
					return 0, 0, &DataError{File: c.path, Line: clampInt(c.lineNo), Col: col + 1,
						Msg: fmt.Sprintf("t = %q is not a finite time", clip(cell))}
				}
				t, res = v, resolution(cell)
			default:
				frame[k] = v
			}
		}
		if last {
			break
		}
		start = end + 1
	}
	if col+1 < ncols {
		if final {
			return 0, 0, fmt.Errorf("%s:%d: last row has %d of %d cells: %w", c.path, c.lineNo, col+1, ncols, ErrTruncated)
		}
		return 0, 0, c.widthError(b, final)
	}
	c.parsed++
	return t, res, nil
}

// widthError reports a row with the wrong number of cells; in the first data
// row, integer cells in excess are the mark of a decimal comma.
func (c *CSV) widthError(b []byte, final bool) error {
	n := bytes.Count(b, []byte{','}) + 1
	if c.parsed == 0 && n > len(c.chOf) && allIntegers(b) {
		return &HeaderError{File: c.path, Line: clampInt(c.lineNo),
			Msg: fmt.Sprintf("the first row has %d cells but the header %d columns, and all are integers: a decimal comma? Use '.' for decimals, ',' between cells", n, len(c.chOf))}
	}
	return &DataError{File: c.path, Line: clampInt(c.lineNo),
		Msg: fmt.Sprintf("row has %d cells, the header has %d columns", n, len(c.chOf))}
}

// cellError reports a cell that is not a number.
func (c *CSV) cellError(col int, cell []byte) error {
	msg := fmt.Sprintf("cell %q is not a number (column %q)", clip(cell), c.cols[col])
	if len(cell) == 0 {
		msg = fmt.Sprintf("empty cell (column %q)", c.cols[col])
	}
	return &DataError{File: c.path, Line: clampInt(c.lineNo), Col: col + 1, Msg: msg}
}

// parseCell parses a trimmed cell as a float64. NaN and ±Inf spellings are
// accepted; values beyond float64 become ±Inf (or 0), which the pipeline
// flags.
//
// The string handed to strconv.ParseFloat aliases the line bytes through
// unsafe.String, to keep the per-row path free of allocations. This is safe:
// ParseFloat does not retain its argument (its *NumError carries a copy), and
// the bytes are not modified while it runs.
func parseCell(cell []byte) (float64, bool) {
	if len(cell) == 0 {
		return 0, false
	}
	v, err := strconv.ParseFloat(unsafe.String(unsafe.SliceData(cell), len(cell)), 64)
	if err != nil {
		if ne, ok := err.(*strconv.NumError); ok && ne.Err == strconv.ErrRange {
			return v, true
		}
		return 0, false
	}
	return v, true
}

// resolution returns the step of the last printed digit of a number's text:
// 10^(exponent − digits after the point); "0.000125" gives 1e-6, "1.25e-4"
// gives 1e-6, "2" gives 1.
func resolution(cell []byte) float64 {
	decimals, exp := 0, 0
	i := 0
	for i < len(cell) && cell[i] != '.' && cell[i] != 'e' && cell[i] != 'E' {
		i++
	}
	if i < len(cell) && cell[i] == '.' {
		i++
		for i < len(cell) && cell[i] >= '0' && cell[i] <= '9' {
			decimals++
			i++
		}
	}
	if i < len(cell) && (cell[i] == 'e' || cell[i] == 'E') {
		i++
		neg := false
		if i < len(cell) && (cell[i] == '+' || cell[i] == '-') {
			neg = cell[i] == '-'
			i++
		}
		for ; i < len(cell) && cell[i] >= '0' && cell[i] <= '9' && exp < 1000; i++ {
			exp = 10*exp + int(cell[i]-'0')
		}
		if neg {
			exp = -exp
		}
	}
	return math.Pow10(exp - decimals)
}

// allIntegers reports whether every cell of a row is an integer, possibly
// signed and blank-padded.
func allIntegers(b []byte) bool {
	for cell := range bytes.SplitSeq(b, []byte{','}) {
		cell = trimBlank(cell)
		if len(cell) > 0 && (cell[0] == '-' || cell[0] == '+') {
			cell = cell[1:]
		}
		if len(cell) == 0 {
			return false
		}
		for _, ch := range cell {
			if ch < '0' || ch > '9' {
				return false
			}
		}
	}
	return true
}

// trimLine strips the line end (LF or CRLF) and surrounding blanks.
func trimLine(b []byte) []byte {
	if n := len(b); n > 0 && b[n-1] == '\n' {
		b = b[:n-1]
	}
	if n := len(b); n > 0 && b[n-1] == '\r' {
		b = b[:n-1]
	}
	return trimBlank(b)
}

// trimBlank strips spaces and tabs from both ends.
func trimBlank(b []byte) []byte {
	for len(b) > 0 && (b[0] == ' ' || b[0] == '\t') {
		b = b[1:]
	}
	for len(b) > 0 && (b[len(b)-1] == ' ' || b[len(b)-1] == '\t') {
		b = b[:len(b)-1]
	}
	return b
}

// clip shortens a cell for quoting in a message.
func clip(b []byte) string {
	if len(b) > maxCellQuote {
		return string(b[:maxCellQuote]) + "…"
	}
	return string(b)
}

// clampInt converts a line count to int, saturating on 32-bit platforms.
func clampInt(v int64) int {
	if v > math.MaxInt {
		return math.MaxInt
	}
	return int(v)
}
