//go:build !race

package pcmtcp

import (
	"bytes"
	"context"
	"net"
	"testing"
	"time"

	"github.com/gridloupe/gridloupe/stream/pcm"
)

// TestConnReadAllocs: once connected, reading a TCP sender allocates
// nothing per call, bare or GLF1-framed (STYLE.md §5); only a redial may.
func TestConnReadAllocs(t *testing.T) {
	const nch = 6
	vals := frames(4096, nch)
	raw := make([]byte, len(vals)*3)
	pcm.S24LE.Encode(raw, vals)
	var framed bytes.Buffer
	w, _ := pcm.NewGLF1Writer(&framed, nch, pcm.S24LE)
	_ = w.Write(vals, 256)
	for _, tc := range []struct {
		name string
		glf1 bool
		b    []byte
	}{{"raw", false, raw}, {"glf1", true, framed.Bytes()}} {
		t.Run(tc.name, func(t *testing.T) {
			done := make(chan struct{})
			defer close(done)
			addr := serve(t, func(c net.Conn) { // an endless sender
				for {
					select {
					case <-done:
						return
					default:
					}
					if _, err := c.Write(tc.b); err != nil {
						return
					}
				}
			})
			c, err := Dial(context.Background(), ConnConfig{Addr: addr, Channels: nch, Format: pcm.S24LE, GLF1: tc.glf1,
				SampleRate: 10240, MinBackoff: time.Millisecond})
			if err != nil {
				t.Fatal(err)
			}
			defer c.Close()
			dst := make([]float64, 512*nch)
			for range 8 { // connect and fill the buffers
				if _, err := c.ReadFrames(dst); err != nil {
					t.Fatal(err)
				}
			}
			if a := testing.AllocsPerRun(300, func() { _, _ = c.ReadFrames(dst) }); a != 0 {
				t.Errorf("Conn.ReadFrames (%s): %v allocs per call, want 0", tc.name, a)
			}
			if c.Redials() != 0 {
				t.Errorf("%d redials on a steady link", c.Redials())
			}
		})
	}
}
