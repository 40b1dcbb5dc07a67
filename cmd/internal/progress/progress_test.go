package progress

import (
	"bytes"
	"errors"
	"strings"
	"testing"
	"time"
)

// clock is a settable test clock.
type clock struct{ t time.Time }

func (c *clock) now() time.Time { return c.t }

func newTest(name string, total int64) (*Line, *bytes.Buffer, *clock) {
	c := &clock{t: time.Date(2026, 3, 1, 10, 0, 0, 0, time.UTC)}
	var out bytes.Buffer
	return New(&out, name, total, c.now), &out, c
}

// TestRender: the text for a few states, worked by hand: 5 MiB of 10 MiB
// after 2 s is 50 %, 10 of 20 cells, 2.5 MiB/s and 5 MiB / 2.5 MiB/s =
// 2 s left.
func TestRender(t *testing.T) {
	for _, tc := range []struct {
		done, total int64
		after       time.Duration
		want        string
	}{
		{5 * mib, 10 * mib, 2 * time.Second, "replay x.wav  50% [##########          ] 5.0/10.0 MiB, 2.5 MiB/s, 2 s left"},
		{0, 10 * mib, 0, "replay x.wav   0% [                    ] 0.0/10.0 MiB"},
		{mib, 10 * mib, Every - time.Millisecond, "replay x.wav  10% [##                  ] 1.0/10.0 MiB"}, // no rate from the first read
		{mib / 2, 10 * mib, time.Second, "replay x.wav   5% [#                   ] 0.5/10.0 MiB, 0.5 MiB/s, 19 s left"},
		{10 * mib, 10 * mib, 4 * time.Second, "replay x.wav 100% [####################] 10.0/10.0 MiB, 2.5 MiB/s, 0 s left"},
		{12 * mib, 10 * mib, 4 * time.Second, "replay x.wav 100% [####################] 12.0/10.0 MiB, 3.0 MiB/s, 0 s left"}, // a file that grew
	} {
		l, _, c := newTest("x.wav", tc.total)
		l.done = tc.done
		if got := string(l.render(nil, c.t.Add(tc.after))); got != tc.want {
			t.Errorf("render(%d of %d after %v)\n got %q\nwant %q", tc.done, tc.total, tc.after, got, tc.want)
		}
	}
}

// TestThrottleAndClear: the first write draws, writes within Every do not,
// a write Every later redraws over the line (padding a shorter one), and
// Finish blanks exactly the characters drawn. src: the package doc.
func TestThrottleAndClear(t *testing.T) {
	l, out, c := newTest("x.wav", 100*mib)
	_, _ = l.Write(make([]byte, 60*mib))
	first := out.String()
	if !strings.HasPrefix(first, "\rreplay x.wav  60% ") {
		t.Fatalf("first write drew %q", first)
	}
	c.t = c.t.Add(Every - time.Millisecond)
	_, _ = l.Write(make([]byte, mib))
	if out.String() != first {
		t.Errorf("redrawn within %v: %q", Every, out.String()[len(first):])
	}
	c.t = c.t.Add(time.Millisecond)
	_, _ = l.Write(make([]byte, mib))
	second := out.String()[len(first):]
	if !strings.HasPrefix(second, "\rreplay x.wav  62% ") || len(second) < len(first) {
		t.Errorf("second draw %q does not cover the first %q", second, first)
	}
	// A shorter line than the last one drawn is padded to cover it.
	out.Reset()
	l.width = 120
	c.t = c.t.Add(Every)
	_, _ = l.Write(nil)
	if got := out.String(); len(got) != 1+120 || strings.TrimRight(got, " ") == got {
		t.Errorf("a shorter line was not padded to 120 characters: %q", got)
	}
	second = out.String()[:len(strings.TrimRight(out.String(), " "))]
	out.Reset()
	l.Finish()
	want := "\r" + strings.Repeat(" ", len(second)-1) + "\r"
	if out.String() != want {
		t.Errorf("Finish wrote %q, want %q", out.String(), want)
	}
	out.Reset()
	l.Finish()
	if out.Len() != 0 {
		t.Errorf("a second Finish wrote %q", out.String())
	}
	idle, idleOut, _ := newTest("x.wav", 10)
	idle.Finish()
	if idleOut.Len() != 0 {
		t.Errorf("Finish without a draw wrote %q", idleOut.String())
	}
}

// TestShortName: a long name is cut to maxName characters with an ellipsis.
func TestShortName(t *testing.T) {
	l, _, _ := newTest("a-very-long-recording-name-of-a-cabinet.wav", 1)
	if want := "a-very-long-recording-n…"; l.name != want {
		t.Errorf("name %q, want %q", l.name, want)
	}
}

type failWriter struct{}

func (failWriter) Write([]byte) (int, error) { return 0, errors.New("terminal gone") }

// TestWriteNeverFails: a terminal write error does not reach the reader.
func TestWriteNeverFails(t *testing.T) {
	l := New(failWriter{}, "x", 10, nil)
	if n, err := l.Write([]byte("abc")); n != 3 || err != nil {
		t.Errorf("Write = %d, %v; want 3, nil", n, err)
	}
}
