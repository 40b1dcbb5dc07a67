//go:build !race

package progress

import (
	"io"
	"testing"
	"time"
)

// TestWriteAllocs: counting and redrawing reuse one buffer (the line sits
// behind every read of the input).
func TestWriteAllocs(t *testing.T) {
	c := &clock{t: time.Date(2026, 3, 1, 10, 0, 0, 0, time.UTC)}
	l := New(io.Discard, "x.wav", 1<<30, c.now)
	p := make([]byte, 4096)
	_, _ = l.Write(p)
	if n := testing.AllocsPerRun(100, func() {
		c.t = c.t.Add(Every)
		_, _ = l.Write(p)
	}); n != 0 {
		t.Errorf("%v allocations per redrawing Write, want 0", n)
	}
}
