package pcmtcp

import (
	"bytes"
	"context"
	"errors"
	"io"
	"net"
	"testing"
	"time"

	"github.com/gridloupe/gridloupe/stream"
	"github.com/gridloupe/gridloupe/stream/pcm"
)

// serve accepts connections on a loopback listener and hands each to the
// next function of sessions; it closes a connection when its function returns.
func serve(t *testing.T, sessions ...func(net.Conn)) string {
	t.Helper()
	ln, err := net.Listen("tcp", "127.0.0.1:0")
	if err != nil {
		t.Fatal(err)
	}
	t.Cleanup(func() { ln.Close() })
	go func() {
		for _, s := range sessions {
			c, err := ln.Accept()
			if err != nil {
				return
			}
			s(c)
			c.Close()
		}
	}()
	return ln.Addr().String()
}

// readConn reads until io.EOF or n frames, returning values and gaps.
func readConn(t *testing.T, c *Conn, nch, n int) ([]float64, []uint64, error) {
	t.Helper()
	var vals []float64
	var gaps []uint64
	dst := make([]float64, 64*nch)
	for len(vals) < n*nch {
		k, err := c.ReadFrames(dst)
		vals = append(vals, dst[:k*nch]...)
		var g *stream.Gap
		if errors.As(err, &g) {
			gaps = append(gaps, g.Missing)
			continue
		}
		if err != nil {
			return vals, gaps, err
		}
	}
	return vals, gaps, nil
}

// TestConnGLF1Reconnect: a GLF1 sender whose link drops is redialled; the
// samples it produced while the link was down are a gap of exactly their
// number (from the frame index), and the samples on both sides arrive.
func TestConnGLF1Reconnect(t *testing.T) {
	const nch = 2
	vals := frames(300, nch)
	var buf bytes.Buffer
	w, _ := pcm.NewGLF1Writer(&buf, nch, pcm.S16LE)
	_ = w.Write(vals[:100*nch], 50)
	first := append([]byte(nil), buf.Bytes()...)
	buf.Reset()
	w.Skip(70) // produced while nobody listened
	_ = w.Write(vals[170*nch:], 50)
	second := append([]byte(nil), buf.Bytes()...)
	addr := serve(t,
		func(c net.Conn) { c.Write(first); c.Write(second[:7]) }, // and a cut frame
		func(c net.Conn) { c.Write(second) })
	c, err := Dial(context.Background(), ConnConfig{Addr: addr, Channels: nch, Format: pcm.S16LE, GLF1: true, SampleRate: 10240,
		MinBackoff: time.Millisecond})
	if err != nil {
		t.Fatal(err)
	}
	defer c.Close()
	got, gaps, err := readConn(t, c, nch, 230)
	if err != nil {
		t.Fatal(err)
	}
	if len(gaps) != 1 || gaps[0] != 70 {
		t.Fatalf("gaps %v, want one of exactly 70 samples", gaps)
	}
	want := append(append([]float64(nil), vals[:100*nch]...), vals[170*nch:]...)
	if !equal(got, want) {
		t.Fatalf("values differ across the reconnect")
	}
	if c.Redials() != 1 {
		t.Errorf("%d redials, want 1", c.Redials())
	}
}

// TestConnRawReconnect: a bare stream's reconnect is a gap sized from the
// time the link was down (here a fake clock: 0.5 s at 1 kHz = 500 samples).
func TestConnRawReconnect(t *testing.T) {
	const nch = 3
	vals := frames(40, nch)
	b := make([]byte, len(vals)*2)
	pcm.S16LE.Encode(b, vals)
	addr := serve(t, func(c net.Conn) { c.Write(b[:20*nch*2+1]) }, func(c net.Conn) { c.Write(b[20*nch*2:]) })
	clock := time.Date(2026, 3, 1, 10, 0, 0, 0, time.UTC)
	calls := 0
	now := func() time.Time {
		calls++
		if calls > 1 {
			return clock.Add(500 * time.Millisecond)
		}
		return clock
	}
	c, err := Dial(context.Background(), ConnConfig{Addr: addr, Channels: nch, Format: pcm.S16LE, SampleRate: 1000,
		MinBackoff: time.Millisecond, Now: now})
	if err != nil {
		t.Fatal(err)
	}
	defer c.Close()
	got, gaps, err := readConn(t, c, nch, 40)
	if err != nil {
		t.Fatal(err)
	}
	if len(gaps) != 1 || gaps[0] != 500 {
		t.Fatalf("gaps %v, want one of 500 samples (0.5 s × 1 kHz)", gaps)
	}
	if !equal(got, vals) {
		t.Fatal("values differ")
	}
}

// TestConnShutdown: cancelling the context releases a read blocked on a
// silent sender and a dial loop against a closed port; both end with io.EOF.
func TestConnShutdown(t *testing.T) {
	hold := make(chan struct{})
	defer close(hold)
	addr := serve(t, func(net.Conn) { <-hold })
	ln, _ := net.Listen("tcp", "127.0.0.1:0")
	dead := ln.Addr().String()
	ln.Close()
	for _, a := range []string{addr, dead} {
		ctx, cancel := context.WithCancel(context.Background())
		c, err := Dial(ctx, ConnConfig{Addr: a, Channels: 1, Format: pcm.S16LE, SampleRate: 1000, MinBackoff: 5 * time.Millisecond})
		if err != nil {
			t.Fatal(err)
		}
		done := make(chan error, 1)
		go func() {
			_, err := c.ReadFrames(make([]float64, 8))
			done <- err
		}()
		time.Sleep(50 * time.Millisecond)
		cancel()
		select {
		case err := <-done:
			if err != io.EOF {
				t.Errorf("%s: ReadFrames after cancel = %v, want io.EOF", a, err)
			}
		case <-time.After(5 * time.Second):
			t.Fatalf("%s: ReadFrames still blocked 5 s after cancel", a)
		}
		if err := c.Close(); err != nil && !errors.Is(err, net.ErrClosed) {
			t.Error(err)
		}
		_ = c.Close()
	}
}

// TestConnFormatMismatch: a sender set up differently is an error, not a
// reason to redial forever.
func TestConnFormatMismatch(t *testing.T) {
	var buf bytes.Buffer
	w, _ := pcm.NewGLF1Writer(&buf, 2, pcm.S32LE)
	_ = w.Write(frames(10, 2), 10)
	addr := serve(t, func(c net.Conn) { c.Write(buf.Bytes()) })
	c, _ := Dial(context.Background(), ConnConfig{Addr: addr, Channels: 2, Format: pcm.S16LE, GLF1: true, SampleRate: 1000})
	defer c.Close()
	if _, _, err := readConn(t, c, 2, 10); !errors.Is(err, pcm.ErrFormat) {
		t.Fatalf("err %v, want pcm.ErrFormat", err)
	}
}

// frames makes n interleaved frames of nch channels with distinct values.
func frames(n, nch int) []float64 {
	v := make([]float64, n*nch)
	for i := range v {
		v[i] = float64((i*7919)%20001 - 10000)
	}
	return v
}

func equal(a, b []float64) bool {
	if len(a) != len(b) {
		return false
	}
	for i := range a {
		if a[i] != b[i] {
			return false
		}
	}
	return true
}
