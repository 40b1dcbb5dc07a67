package input

import (
	"bytes"
	"errors"
	"fmt"
	"io"
	"math"
	"slices"
	"strconv"
	"strings"
	"testing"
	"testing/iotest"
)

// rateTol is the tolerance on a sample rate found from a t column printed to
// 9 decimals over ≥ 1 s: the span is off by at most 1e-9 s, so fs by ≤ fs·1e-9.
const rateTol = 1e-9

func TestCSVHeaderErrors(t *testing.T) {
	t.Parallel()
	tests := []struct {
		name      string
		in        string
		want      []string
		line, col int
		phrase    string
		src       string
	}{
		{name: "missing channel", in: "t,va,ia\n0,1,2\n", want: []string{"va", "vb"}, line: 1,
			phrase: `no column for channel "vb" (columns found: t, va, ia)`, src: "DESIGN.md CSV input: every config channel must have a column"},
		{name: "two missing", in: "# c\nva,ia\n", want: []string{"vb", "ia", "vc"}, line: 2,
			phrase: `no column for channels "vb", "vc"`, src: "DESIGN.md CSV input: every config channel must have a column"},
		{name: "duplicate column", in: "va,ia,va\n", want: []string{"va"}, line: 1, col: 3,
			phrase: `column "va" appears twice (columns 1 and 3)`, src: "README, replay: duplicate column is a header error"},
		{name: "empty header", in: "# site\n , ,\n", want: []string{"va"}, line: 2,
			phrase: "empty header", src: "README, replay: empty header is a header error"},
		{name: "no header row", in: "# only comments\n\n", want: []string{"va"}, line: 2,
			phrase: "no header row", src: "README, replay: empty header is a header error"},
		{name: "empty file", in: "", want: []string{"va"}, line: 1,
			phrase: "no header row", src: "README, replay: empty header is a header error"},
		{name: "nameless column", in: "va,,ia\n", want: []string{"va"}, line: 1, col: 2,
			phrase: "column 2 has no name", src: "common practice, no source: every column needs a name"},
		{name: "semicolon", in: "t;va;ia\n0;1,5;2\n", want: []string{"va"}, line: 1,
			phrase: "comma-separated only", src: "DESIGN.md CSV input: comma-separated, anything else rejected with a message that says so"},
		{name: "tab", in: "t\tva\n0\t1\n", want: []string{"va"}, line: 1,
			phrase: "comma-separated only", src: "DESIGN.md CSV input: comma-separated only"},
		{name: "semicolon in name", in: "t,va;ia\n", want: []string{"va"}, line: 1, col: 2,
			phrase: "comma-separated only", src: "DESIGN.md CSV input: comma-separated only"},
		{name: "decimal comma", in: "va,ia\n230,5,12,25\n", want: []string{"va", "ia"}, line: 2,
			phrase: "decimal comma", src: "DESIGN.md CSV input: '.' decimals; anything else rejected with a message that says so"},
		{name: "case differs", in: "VA,ia\n", want: []string{"va"}, line: 1,
			phrase: `"VA" differs from "va" only in case`, src: "common practice, no source: names are matched exactly"},
		{name: "header missing", in: "0.1,0.2\n", want: []string{"va"}, line: 1,
			phrase: "is the header row missing?", src: "common practice, no source"},
		{name: "t as channel", in: "t,va\n", want: []string{"t"}, line: 1, col: 1,
			phrase: "cannot be a channel", src: "DESIGN.md CSV input: first column t is time in seconds"},
		{name: "channel twice", in: "va,ia\n", want: []string{"va", "va"}, line: 1, col: 1,
			phrase: "requested twice", src: "common practice, no source"},
		{name: "bare CR", in: "va,ia\r1,2\r", want: []string{"va"}, line: 1,
			phrase: "carriage return", src: "README, replay: CRLF accepted (so LF or CRLF only)"},
		{name: "no channels", in: "va\n", want: nil, line: 1,
			phrase: "no channels", src: "common practice, no source"},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			t.Parallel()
			_, err := NewCSV("rec.csv", strings.NewReader(tc.in), tc.want)
			var he *HeaderError
			if !errors.As(err, &he) {
				t.Fatalf("err = %v, want *HeaderError (%s)", err, tc.src)
			}
			if !errors.Is(err, ErrHeader) {
				t.Errorf("errors.Is(err, ErrHeader) = false")
			}
			if he.File != "rec.csv" || he.Line != tc.line || he.Col != tc.col {
				t.Errorf("at %s:%d:%d, want rec.csv:%d:%d", he.File, he.Line, he.Col, tc.line, tc.col)
			}
			if !strings.Contains(he.Msg, tc.phrase) {
				t.Errorf("message %q lacks %q", he.Msg, tc.phrase)
			}
			prefix := fmt.Sprintf("rec.csv:%d: ", tc.line)
			if tc.col > 0 {
				prefix = fmt.Sprintf("rec.csv:%d:%d: ", tc.line, tc.col)
			}
			if !strings.HasPrefix(err.Error(), prefix) {
				t.Errorf("Error() = %q, want prefix %q", err.Error(), prefix)
			}
		})
	}
}

func TestCSVSampleRateFromT(t *testing.T) {
	t.Parallel()
	tests := []struct {
		name    string
		fs      float64
		digits  int
		seconds float64
		tol     float64 // relative
		src     string
	}{
		{name: "10240 Hz, 9 decimals", fs: 10240, digits: 9, seconds: 2, tol: rateTol,
			src: "closed form fs = (n−1)/span; t printed to 1e-9 s"},
		{name: "12800 Hz, 9 decimals", fs: 12800, digits: 9, seconds: 1.5, tol: rateTol,
			src: "closed form fs = (n−1)/span; the contract recordings use 12.8 kHz"},
		{name: "non-integer 10000/3 Hz", fs: 10000.0 / 3, digits: 9, seconds: 3, tol: 2 * rateTol,
			src: "closed form fs = (n−1)/span; span off by ≤ 1e-9 s so fs by ≤ 1e-9 relative, not snapped"},
		{name: "10240 Hz, 6 decimals, 20 s", fs: 10240, digits: 6, seconds: 20, tol: 0,
			src: "closed form fs = (n−1)/span = 10240/1.000000; 20 s of rows stay on the grid t0 + i/fs"},
		{name: "10240 Hz, 4 decimals: coarser than half a sample", fs: 10240, digits: 4, seconds: 5, tol: 0,
			src: "closed form fs = 10240/1.0000; t rounded to 1e-4 s is off by up to 5e-5 s > 0.5/fs = 4.9e-5 s, so the check must widen by the printed resolution"},
		{name: "80 kHz, 6 decimals, rounded to the integer", fs: 80000, digits: 6, seconds: 1.5, tol: 0,
			src: "closed form (n−1)/span = 65535/0.819187 = 80000.05 (t printed to 6 decimals), within the 1e-6 s resolution of t (±0.098 Hz): 80000 exactly"},
		{name: "51200 Hz, 9 decimals", fs: 51200, digits: 9, seconds: 1.2, tol: rateTol,
			src: "closed form fs = (n−1)/span over one second of rows (under the 65536-row cap)"},
		{name: "100 kHz, over the row cap", fs: 100000, digits: 9, seconds: 1.1, tol: 2e-8,
			src: "closed form fs = (n−1)/span over 65536 rows (0.655 s): span off by ≤ 1e-9 s"},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			t.Parallel()
			if testing.Short() && tc.seconds > 10 {
				tc.seconds = 10
			}
			rows := uint64(tc.seconds * tc.fs)
			g := newCSVGen(tc.fs, 2, tc.digits, 0)
			r := io.LimitReader(g, csvBytes(t, tc.fs, 2, tc.digits, rows))
			c, err := NewCSV("gen.csv", r, []string{"c0", "c1"})
			if err != nil {
				t.Fatal(err)
			}
			if got := c.SampleRate(); math.Abs(got-tc.fs) > tc.tol*tc.fs {
				t.Errorf("SampleRate() = %.12g, want %.12g ±%g relative (%s)", got, tc.fs, tc.tol, tc.src)
			}
			n := 0
			dst := make([]float64, 2*1000)
			var rerr error
			for range maxReadCalls {
				var k int
				k, rerr = c.ReadFrames(dst)
				for i := range k {
					if want := genValue(tc.fs, uint64(n+i), 1); dst[2*i+1] != want {
						t.Fatalf("row %d: c1 = %v, want %v (as generated)", n+i, dst[2*i+1], want)
					}
				}
				n += k
				if rerr != nil {
					break
				}
			}
			if rerr != io.EOF || uint64(n) != rows {
				t.Fatalf("read %d frames, err %v; want %d, io.EOF", n, rerr, rows)
			}
		})
	}
}

// csvBytes returns the length of the first rows rows of csvGen's output.
func csvBytes(tb testing.TB, fs float64, nch, digits int, rows uint64) int64 {
	tb.Helper()
	g := newCSVGen(fs, nch, digits, 0)
	g.next()
	total := int64(len(g.pending))
	for range rows {
		g.next()
		total += int64(len(g.pending))
	}
	return total
}

func TestCSVNonUniformT(t *testing.T) {
	t.Parallel()
	const fs = 1000.0
	// rows builds t = i/fs for i in [0, n) except those in skip, with
	// offset[i] seconds added.
	rows := func(n int, skip map[int]bool, offset map[int]float64) (string, map[int]int) {
		var b strings.Builder
		b.WriteString("t,va\n")
		lineOf := map[int]int{}
		line := 1
		for i := range n {
			if skip[i] {
				continue
			}
			line++
			lineOf[i] = line
			fmt.Fprintf(&b, "%.9f,%d\n", float64(i)/fs+offset[i], i)
		}
		return b.String(), lineOf
	}
	tests := []struct {
		name      string
		skip      map[int]bool
		offset    map[int]float64
		wantLine  int // 0 = uniform
		wantRows  int
		construct bool // the error comes from NewCSV
		src       string
	}{
		{name: "uniform", wantRows: 3000, src: "README, replay: |t − t0 − i/fs| ≤ 0.5/fs holds for t = i/fs"},
		{name: "jitter within half a sample", offset: map[int]float64{1500: 0.4 / fs, 2500: -0.4 / fs}, wantRows: 3000,
			src: "README, replay: |t − t0 − i/fs| ≤ 0.5/fs; 0.4/fs passes"},
		{name: "missing row after the first second", skip: map[int]bool{2000: true}, wantLine: 2002, wantRows: 2000,
			src: "README, replay: the row after row 1999 (line 2002) holds t = 2001/fs, off by 1/fs > 0.5/fs"},
		{name: "jitter beyond half a sample", offset: map[int]float64{1700: 0.6 / fs}, wantLine: 1702, wantRows: 1700,
			src: "README, replay: 0.6/fs > 0.5/fs"},
		{name: "missing row in the first second", skip: map[int]bool{400: true}, wantLine: 402, wantRows: 400,
			src: "README, replay: every t is checked, the held first second too; the row after row 399 (line 402) is 2/fs on"},
		{name: "missing row late in the first second", skip: map[int]bool{990: true}, wantLine: 992, wantRows: 990,
			src: "the step t(991) − t(989) = 2/fs is off one period by more than 0.5/fs, although fs from the span is skewed"},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			t.Parallel()
			in, lineOf := rows(3000, tc.skip, tc.offset)
			c, err := NewCSV("u.csv", strings.NewReader(in), []string{"va"})
			if err != nil {
				t.Fatal(err)
			}
			got, err := readAll(t, c, 1, 333)
			if len(got) != tc.wantRows {
				t.Errorf("%d frames delivered, want %d (%s)", len(got), tc.wantRows, tc.src)
			}
			for i, v := range got {
				if v != float64(i) {
					t.Fatalf("frame %d = %v, want %d", i, v, i)
				}
			}
			if tc.wantLine == 0 {
				if err != io.EOF {
					t.Fatalf("err = %v, want io.EOF (%s)", err, tc.src)
				}
				return
			}
			var de *DataError
			if !errors.As(err, &de) || !errors.Is(err, ErrData) {
				t.Fatalf("err = %v, want *DataError (%s)", err, tc.src)
			}
			if de.Line != tc.wantLine || de.Col != 1 || !strings.Contains(de.Msg, "rows missing, repeated or out of order") {
				t.Errorf("error %q at line %d col %d, want line %d col 1", de.Msg, de.Line, de.Col, tc.wantLine)
			}
			if c.Line() != lineOf[tc.wantRows-1] {
				t.Errorf("Line() = %d, want %d (the last row delivered)", c.Line(), lineOf[tc.wantRows-1])
			}
		})
	}
}

func TestCSVTimeEdgeCases(t *testing.T) {
	t.Parallel()
	tests := []struct {
		name     string
		in       string
		wantFS   float64
		newErr   string // phrase of a NewCSV error; "" = none
		wantRows int
		src      string
	}{
		{name: "one row", in: "t,va\n0,1\n", wantFS: 0, wantRows: 1, src: "fs = (n−1)/span needs n ≥ 2: unknown (0)"},
		{name: "no rows", in: "t,va\n", newErr: "e.csv:1: no data rows after the header", src: "README, Errors: a header with no data rows"},
		{name: "no rows, no t", in: "# note\nva\n", newErr: "e.csv:2: no data rows after the header", src: "README, Errors: a header with no data rows"},
		{name: "t does not increase", in: "t,va\n0.5,1\n0.5,2\n", newErr: "t must increase", src: "fs = (n−1)/span needs span > 0"},
		{name: "t not finite", in: "t,va\nNaN,1\n", newErr: "not a finite time", src: "common practice, no source"},
		{name: "short rows end", in: "t,va\n0,1\n0.25,2\n0.5,3\n", wantFS: 4, wantRows: 3, src: "closed form fs = (n−1)/span = 2/0.5"},
		{name: "integer seconds", in: "t,va\n0,1\n1,2\n2,3\n", wantFS: 1, wantRows: 3, src: "closed form fs = (n−1)/span = 1/1 over the first second"},
		{name: "exponent t", in: "t,va\n0e0,1\n2.5e-1,2\n5e-1,3\n", wantFS: 4, wantRows: 3, src: "closed form fs = 2/0.5; strconv parses exponents"},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			t.Parallel()
			c, err := NewCSV("e.csv", strings.NewReader(tc.in), []string{"va"})
			if tc.newErr != "" {
				if !errors.Is(err, ErrData) || !strings.Contains(err.Error(), tc.newErr) {
					t.Fatalf("err = %v, want a data error saying %q (%s)", err, tc.newErr, tc.src)
				}
				return
			}
			if err != nil {
				t.Fatal(err)
			}
			if c.SampleRate() != tc.wantFS {
				t.Errorf("SampleRate() = %v, want %v (%s)", c.SampleRate(), tc.wantFS, tc.src)
			}
			got, err := readAll(t, c, 1, 2)
			if err != io.EOF || len(got) != tc.wantRows {
				t.Errorf("%d frames, err %v; want %d, io.EOF", len(got), err, tc.wantRows)
			}
		})
	}
}

func TestCSVColumnsByName(t *testing.T) {
	t.Parallel()
	in := "t,ib,note,va,ia\n0,1,x,2,3\n0.5,4,y,5,6\n1,7,z,8,9\n"
	c, err := NewCSV("m.csv", strings.NewReader(in), []string{"va", "ia", "ib"})
	if err != nil {
		t.Fatal(err)
	}
	if c.Channels() != 3 {
		t.Errorf("Channels() = %d, want 3", c.Channels())
	}
	if !slices.Equal(c.Extra(), []string{"note"}) {
		t.Errorf("Extra() = %q, want [note] (DESIGN.md: extra columns ignored with one warning)", c.Extra())
	}
	got, err := readAll(t, c, 3, 2)
	// Frames in want order: va, ia, ib (source: the file's cells, mapped by name).
	want := []float64{2, 3, 1, 5, 6, 4, 8, 9, 7}
	if err != io.EOF || !slices.Equal(got, want) {
		t.Errorf("frames %v, err %v; want %v, io.EOF", got, err, want)
	}
	if c.SampleRate() != 2 {
		t.Errorf("SampleRate() = %v, want 2 (closed form (3−1)/1 s)", c.SampleRate())
	}
}

func TestCSVCommentsCRLFAndBlanks(t *testing.T) {
	t.Parallel()
	in := "\ufeff# North Weir DC-2 (invented)\r\n\r\n \"va\" , ia \r\n# mid-file comment\r\n1,2\r\n\r\n  3 ,\t4 \r\n# trailing\r\n"
	c, err := NewCSV("c.csv", strings.NewReader(in), []string{"va", "ia"})
	if err != nil {
		t.Fatal(err)
	}
	if c.Line() != 3 || c.Offset() != int64(strings.Index(in, "# mid")) {
		t.Errorf("after the header: Line() %d Offset() %d, want 3 %d", c.Line(), c.Offset(), strings.Index(in, "# mid"))
	}
	got, err := readAll(t, c, 2, 1)
	if err != io.EOF || !slices.Equal(got, []float64{1, 2, 3, 4}) {
		t.Fatalf("frames %v, err %v; want [1 2 3 4], io.EOF", got, err)
	}
	if c.Line() != 7 {
		t.Errorf("Line() = %d, want 7 (the last row)", c.Line())
	}
	if want := int64(strings.Index(in, "# trailing")); c.Offset() != want {
		t.Errorf("Offset() = %d, want %d (just past the last row)", c.Offset(), want)
	}
}

func TestCSVSpecialValues(t *testing.T) {
	t.Parallel()
	in := "va,ia,ib\nNaN,nan,Inf\n-Inf,+inf,1e400\n-0.5,1E-3,  .25\n"
	c, err := NewCSV("n.csv", strings.NewReader(in), []string{"va", "ia", "ib"})
	if err != nil {
		t.Fatal(err)
	}
	got, err := readAll(t, c, 3, 4)
	if err != io.EOF || len(got) != 9 {
		t.Fatalf("frames %v, err %v", got, err)
	}
	checks := []struct {
		i    int
		ok   func(float64) bool
		what string
	}{
		{0, math.IsNaN, "NaN (strconv.ParseFloat spelling)"},
		{1, math.IsNaN, "nan (strconv.ParseFloat is case-insensitive)"},
		{2, func(v float64) bool { return math.IsInf(v, 1) }, "+Inf"},
		{3, func(v float64) bool { return math.IsInf(v, -1) }, "-Inf"},
		{4, func(v float64) bool { return math.IsInf(v, 1) }, "+inf"},
		{5, func(v float64) bool { return math.IsInf(v, 1) }, "1e400 overflows float64 (IEEE 754 max ≈ 1.8e308): +Inf, flagged by the pipeline"},
		{6, func(v float64) bool { return v == -0.5 }, "-0.5 exactly representable"},
		{7, func(v float64) bool { return v == 1e-3 }, "1E-3 parses as the nearest float64 to 0.001"},
		{8, func(v float64) bool { return v == 0.25 }, ".25 with leading blanks trimmed"},
	}
	for _, ck := range checks {
		if !ck.ok(got[ck.i]) {
			t.Errorf("cell %d = %v, want %s", ck.i, got[ck.i], ck.what)
		}
	}
}

func TestCSVDataErrors(t *testing.T) {
	t.Parallel()
	tests := []struct {
		name      string
		in        string
		want      []string
		wantRows  int
		line, col int
		msg       string // the whole Error() text
		src       string
	}{
		{name: "non-numeric cell", in: "va,ia\n1,2\n3,abc\n", want: []string{"va", "ia"}, wantRows: 1, line: 3, col: 2,
			msg: `d.csv:3:2: cell "abc" is not a number (column "ia")`, src: "DESIGN.md errors: non-numeric CSV cell gives file:line:column"},
		{name: "empty cell", in: "va,ia\n1,2\n,4\n", want: []string{"va", "ia"}, wantRows: 1, line: 3, col: 1,
			msg: `d.csv:3:1: empty cell (column "va")`, src: "DESIGN.md errors: file:line:column"},
		{name: "decimal comma later", in: "va\n1.5\n2,5\n", wantRows: 1, line: 3,
			msg: "d.csv:3: row has 2 cells, the header has 1 columns", src: "README, replay: a row with the wrong number of cells names the line and count"},
		{name: "too few cells", in: "va,ia,ib\n1,2,3\n4,5\n6,7,8\n", wantRows: 1, line: 3,
			msg: "d.csv:3: row has 2 cells, the header has 3 columns", src: "README, replay: wrong cell count is a data error"},
		{name: "too many cells", in: "va,ia\n1,2\n4,5,6\n", want: []string{"va", "ia"}, wantRows: 1, line: 3,
			msg: "d.csv:3: row has 3 cells, the header has 2 columns", src: "README, replay: wrong cell count is a data error"},
		{name: "short last row with newline", in: "va,ia\n1,2\n3\n", want: []string{"va", "ia"}, wantRows: 1, line: 3,
			msg: "d.csv:3: row has 1 cells, the header has 2 columns", src: "a row ended by a newline is whole: not a cut"},
		{name: "long line", in: "va\n1\n" + strings.Repeat(" ", csvBufSize+1) + "2\n", wantRows: 1, line: 3,
			msg: fmt.Sprintf("d.csv:3: line longer than %d bytes", csvBufSize), src: "constant memory: fixed bufio buffer"},
		{name: "text in an extra column is ignored", in: "va,x\n1,zz\n", wantRows: 1, src: "DESIGN.md: extra columns are ignored"},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			t.Parallel()
			want := tc.want
			if want == nil {
				want = []string{"va"}
			}
			c, err := NewCSV("d.csv", strings.NewReader(tc.in), want)
			if err != nil {
				t.Fatal(err)
			}
			got, err := readAll(t, c, c.Channels(), 3)
			if rows := len(got) / c.Channels(); rows != tc.wantRows {
				t.Errorf("%d frames before the error, want %d", rows, tc.wantRows)
			}
			if tc.msg == "" {
				if err != io.EOF {
					t.Errorf("err = %v, want io.EOF (%s)", err, tc.src)
				}
				return
			}
			var de *DataError
			if !errors.As(err, &de) || !errors.Is(err, ErrData) {
				t.Fatalf("err = %v, want *DataError (%s)", err, tc.src)
			}
			if de.Line != tc.line || de.Col != tc.col || err.Error() != tc.msg {
				t.Errorf("err = %q (line %d col %d), want %q (%s)", err, de.Line, de.Col, tc.msg, tc.src)
			}
			// Errors are sticky.
			if n, again := c.ReadFrames(make([]float64, 8)); n != 0 || again != err {
				t.Errorf("after the error: %d, %v; want 0 and the same error", n, again)
			}
		})
	}
}

func TestCSVEndings(t *testing.T) {
	t.Parallel()
	tests := []struct {
		name      string
		in        string
		want      []float64
		truncated bool
		line      int
		src       string
	}{
		{name: "no final newline, whole row", in: "va,ia\n1,2\n3,4", want: []float64{1, 2, 3, 4},
			src: "README, replay: a file ending mid-row with complete cells is a complete row"},
		{name: "cut: too few cells", in: "va,ia\n1,2\n3", want: []float64{1, 2}, truncated: true, line: 3,
			src: "README, replay: a final row with too few cells is a cut recording"},
		{name: "cut after a comma", in: "va,ia\n1,2\n3,", want: []float64{1, 2}, truncated: true, line: 3,
			src: "README, replay: a final row with too few cells is a cut recording"},
		{name: "cut inside an exponent", in: "va,ia\n1,2\n3,4e", want: []float64{1, 2}, truncated: true, line: 3,
			src: "a number cut inside its text does not parse: a cut recording"},
		{name: "final comment without newline", in: "va,ia\n1,2\n# end", want: []float64{1, 2},
			src: "README, replay: # lines anywhere are comments"},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			t.Parallel()
			c, err := NewCSV("end.csv", strings.NewReader(tc.in), []string{"va", "ia"})
			if err != nil {
				t.Fatal(err)
			}
			got, err := readAll(t, c, 2, 5)
			if !slices.Equal(got, tc.want) {
				t.Errorf("frames %v, want %v (%s)", got, tc.want, tc.src)
			}
			if !tc.truncated {
				if err != io.EOF {
					t.Errorf("err = %v, want io.EOF", err)
				}
				return
			}
			if !errors.Is(err, ErrTruncated) || !strings.HasPrefix(err.Error(), fmt.Sprintf("end.csv:%d: ", tc.line)) {
				t.Errorf("err = %v, want ErrTruncated at end.csv:%d (%s)", err, tc.line, tc.src)
			}
			if c.Line() != 2 {
				t.Errorf("Line() = %d, want 2 (the last whole row)", c.Line())
			}
		})
	}
}

func TestCSVShortBuffer(t *testing.T) {
	t.Parallel()
	c, err := NewCSV("s.csv", strings.NewReader("va,ia\n1,2\n"), []string{"va", "ia"})
	if err != nil {
		t.Fatal(err)
	}
	if n, err := c.ReadFrames(nil); n != 0 || err != nil {
		t.Errorf("ReadFrames(nil) = %d, %v; want 0, nil (io.Reader rule for empty buffers)", n, err)
	}
	if n, err := c.ReadFrames(make([]float64, 1)); n != 0 || err != io.ErrShortBuffer {
		t.Errorf("ReadFrames(1 value) = %d, %v; want 0, io.ErrShortBuffer", n, err)
	}
	// Room for 1.5 frames holds one frame.
	dst := make([]float64, 3)
	if n, err := c.ReadFrames(dst); n != 1 || (err != nil && err != io.EOF) || dst[0] != 1 || dst[1] != 2 {
		t.Errorf("ReadFrames(3 values) = %d, %v, %v; want 1 frame [1 2]", n, err, dst)
	}
}

// misbehaving returns the readers of testing/iotest and a failing one
// wrapped around data; failAt is where the failing reader stops.
func misbehaving(data []byte, failAt int) map[string]struct {
	r     io.Reader
	fails bool
} {
	type rd = struct {
		r     io.Reader
		fails bool
	}
	return map[string]rd{
		"one byte":       {r: iotest.OneByteReader(bytes.NewReader(data))},
		"half":           {r: iotest.HalfReader(bytes.NewReader(data))},
		"data with EOF":  {r: iotest.DataErrReader(bytes.NewReader(data))},
		"timeout":        {r: iotest.TimeoutReader(bytes.NewReader(data)), fails: true},
		"fail mid-block": {r: &failAfter{r: bytes.NewReader(data), n: failAt}, fails: true},
	}
}

func TestCSVMisbehavingReaders(t *testing.T) {
	t.Parallel()
	var b strings.Builder
	b.WriteString("t,va,ia\n")
	const rows = 5000 // about 100 KB: more than one fill of the 64 KiB buffer
	for i := range rows {
		fmt.Fprintf(&b, "%.6f,%d,%d\n", float64(i)/100, i, -i)
	}
	data := []byte(b.String())
	failAt := bytes.Index(data, []byte("\n30.000000,")) + 1 // rows 0..2999 are whole
	for name, rd := range misbehaving(data, failAt) {
		t.Run(name, func(t *testing.T) {
			t.Parallel()
			c, err := NewCSV("m.csv", rd.r, []string{"va", "ia"})
			if err != nil {
				t.Fatal(err)
			}
			got, err := readAll(t, c, 2, 7)
			for i := range len(got) / 2 {
				if got[2*i] != float64(i) || got[2*i+1] != -float64(i) {
					t.Fatalf("frame %d = %v, want [%d %d]", i, got[2*i:2*i+2], i, -i)
				}
			}
			switch {
			case !rd.fails:
				if err != io.EOF || len(got) != 2*rows {
					t.Errorf("%d frames, err %v; want %d, io.EOF", len(got)/2, err, rows)
				}
			case name == "fail mid-block":
				if !errors.Is(err, errBoom) || len(got) != 2*3000 {
					t.Errorf("%d frames, err %v; want 3000 whole rows, then the reader's error", len(got)/2, err)
				}
			default:
				// The first read fills the 64 KiB buffer; the second times out.
				if !errors.Is(err, iotest.ErrTimeout) || len(got) == 0 || len(got) >= 2*rows {
					t.Errorf("%d frames, err %v; want the rows of the first read, then iotest.ErrTimeout", len(got)/2, err)
				}
			}
		})
	}
}

// TestCSVBlockSizes reads the same file with every block size from 1 to 40
// frames: the frames must not depend on how the caller slices them.
func TestCSVBlockSizes(t *testing.T) {
	t.Parallel()
	var b strings.Builder
	b.WriteString("t,a,b\n")
	for i := range 97 {
		fmt.Fprintf(&b, "%s,%d,%d\n", strconv.FormatFloat(float64(i)/64, 'f', -1, 64), i, 2*i)
	}
	for block := 1; block <= 40; block++ {
		c, err := NewCSV("b.csv", strings.NewReader(b.String()), []string{"b", "a"})
		if err != nil {
			t.Fatal(err)
		}
		got, err := readAll(t, c, 2, block)
		if err != io.EOF || len(got) != 2*97 {
			t.Fatalf("block %d: %d values, err %v", block, len(got), err)
		}
		for i := range 97 {
			if got[2*i] != float64(2*i) || got[2*i+1] != float64(i) {
				t.Fatalf("block %d frame %d = %v", block, i, got[2*i:2*i+2])
			}
		}
	}
}

func TestResolution(t *testing.T) {
	t.Parallel()
	tests := []struct {
		in   string
		want float64
		src  string
	}{
		{"0.000125", 1e-6, "six decimals: the last printed digit is 1e-6"},
		{"1.25e-4", 1e-6, "two decimals times 1e-4"},
		{"2", 1, "integer"},
		{"12.5E+1", 1, "one decimal times 1e1: the 5 is in the units place"},
		{"-0.5", 0.1, "one decimal"},
	}
	const relTol = 1e-12 // math.Pow10 is exact to the last bit or two
	for _, tc := range tests {
		if got := resolution([]byte(tc.in)); math.Abs(got-tc.want) > relTol*tc.want {
			t.Errorf("resolution(%q) = %g, want %g (%s)", tc.in, got, tc.want, tc.src)
		}
	}
}

// cycleReader returns head once, then body over and over.
type cycleReader struct {
	head, body []byte
	pos        int
}

func (r *cycleReader) Read(p []byte) (int, error) {
	n := 0
	for n < len(p) {
		if len(r.head) > 0 {
			k := copy(p[n:], r.head)
			r.head, n = r.head[k:], n+k
			continue
		}
		k := copy(p[n:], r.body[r.pos:])
		n += k
		r.pos = (r.pos + k) % len(r.body)
	}
	return n, nil
}

// BenchmarkCSVReadFrames parses rows without a t column (an endless file
// repeating 1024 rows), so that NewCSV runs once, outside the loop.
func BenchmarkCSVReadFrames(b *testing.B) {
	for _, nch := range []int{2, 6} {
		b.Run(fmt.Sprintf("channels=%d", nch), func(b *testing.B) {
			const rows, block = 1024, 256
			head := []byte("# North Weir DC-2 (invented)\n")
			var body []byte
			for k := range nch {
				if k > 0 {
					head = append(head, ',')
				}
				head = append(head, "c"+strconv.Itoa(k)...)
			}
			head = append(head, '\n')
			for i := range uint64(rows) {
				for k := range nch {
					if k > 0 {
						body = append(body, ',')
					}
					body = strconv.AppendFloat(body, genValue(10240, i, k), 'f', 3, 64)
				}
				body = append(body, '\n')
			}
			want := make([]string, nch)
			for k := range want {
				want[k] = "c" + strconv.Itoa(k)
			}
			c, err := NewCSV("bench.csv", &cycleReader{head: head, body: body}, want)
			if err != nil {
				b.Fatal(err)
			}
			dst := make([]float64, block*nch)
			b.SetBytes(int64(len(body)) * block / rows) // bytes of text per call
			b.ReportAllocs()
			frames := 0
			for b.Loop() {
				n, err := c.ReadFrames(dst)
				if err != nil {
					b.Fatal(err)
				}
				frames += n
			}
			if frames == 0 || dst[0] != genValue(10240, uint64(frames-block)%rows, 0) {
				b.Fatalf("%d frames, first of the last block %v", frames, dst[0])
			}
		})
	}
}
