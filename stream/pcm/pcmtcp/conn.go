package pcmtcp

import (
	"context"
	"errors"
	"fmt"
	"io"
	"log/slog"
	"math"
	"net"
	"sync"
	"time"

	"github.com/gridloupe/gridloupe/stream"
	"github.com/gridloupe/gridloupe/stream/pcm"
)

// ConnConfig configures a TCP pcm source. Zero values are documented per field.
type ConnConfig struct {
	Addr       string     // host:port of the sender; required
	Channels   int        // channels per frame; required
	Format     pcm.Format // sample format; required
	GLF1       bool       // frames are GLF1 (else bare samples)
	SampleRate float64    // Hz, to size the gap of a raw stream's reconnect; required
	// MinBackoff and MaxBackoff bound the wait between dial attempts,
	// doubling from the first to the second; 0 means 200 ms and 10 s.
	MinBackoff, MaxBackoff time.Duration
	// Dial opens a connection; nil means a net.Dialer with a 5 s timeout.
	Dial   func(ctx context.Context, addr string) (net.Conn, error)
	Now    func() time.Time // nil = time.Now
	Logger *slog.Logger     // nil discards
}

// Conn is a pcm source that dials a TCP sender and redials with backoff
// whenever the link drops. Each reconnect is a gap: for GLF1 the frames'
// sample index gives exactly the samples lost; for a bare stream the wall
// time the link was down, times the sample rate, is reported missing (at
// least one sample, so the window is flagged). When ctx ends, a blocked
// read is released by closing the connection and ReadFrames returns io.EOF.
// A frame format that does not match the configuration is returned as an
// error wrapping pcm.ErrFormat (redialling would not help). Conn is not safe for
// concurrent use apart from Close.
type Conn struct {
	cfg ConnConfig
	ctx context.Context
	log *slog.Logger
	now func() time.Time

	mu      sync.Mutex
	conn    net.Conn // current connection, nil while down
	closed  bool
	stop    chan struct{}
	watcher sync.WaitGroup

	raw      *pcm.Raw
	glf1     *pcm.GLF1
	fr       stream.FrameReader
	up       bool      // a connection is open for reading
	everUp   bool      // connected at least once
	downAt   time.Time // when the link was lost
	backoff  time.Duration
	gap      stream.Gap
	pending  uint64
	redials  uint64
	lastWarn time.Time
}

// Dial returns a Conn; the first connection is made by the first
// ReadFrames. Close releases it.
func Dial(ctx context.Context, cfg ConnConfig) (*Conn, error) {
	if cfg.Addr == "" || !cfg.Format.Valid() || cfg.Channels < 1 || !(cfg.SampleRate > 0) {
		return nil, fmt.Errorf("%w: connect %q needs an address, channels, a format and a sample rate", pcm.ErrFormat, cfg.Addr)
	}
	if cfg.MinBackoff <= 0 {
		cfg.MinBackoff = 200 * time.Millisecond
	}
	if cfg.MaxBackoff <= 0 {
		cfg.MaxBackoff = 10 * time.Second
	}
	if cfg.Dial == nil {
		d := &net.Dialer{Timeout: 5 * time.Second}
		cfg.Dial = func(ctx context.Context, addr string) (net.Conn, error) { return d.DialContext(ctx, "tcp", addr) }
	}
	c := &Conn{cfg: cfg, ctx: ctx, log: cfg.Logger, now: cfg.Now, stop: make(chan struct{}), backoff: cfg.MinBackoff}
	if c.log == nil {
		c.log = slog.New(slog.DiscardHandler)
	}
	if c.now == nil {
		c.now = time.Now
	}
	var err error
	if cfg.GLF1 {
		c.glf1, err = pcm.NewGLF1(cfg.Addr, nil, cfg.Channels, cfg.Format)
		c.fr = c.glf1
	} else {
		c.raw, err = pcm.NewRaw(cfg.Addr, nil, cfg.Channels, cfg.Format)
		c.fr = c.raw
	}
	if err != nil {
		return nil, err
	}
	c.watcher.Add(1)
	go func() {
		defer c.watcher.Done()
		select {
		case <-ctx.Done():
			c.mu.Lock()
			if c.conn != nil {
				_ = c.conn.Close() // releases a blocked Read
			}
			c.mu.Unlock()
		case <-c.stop:
		}
	}()
	return c, nil
}

// Redials returns how many times the link was re-established.
func (c *Conn) Redials() uint64 { return c.redials }

// GLF1Stats returns the frame counters of a GLF1 link (zero for bare PCM).
func (c *Conn) GLF1Stats() pcm.GLF1Stats {
	if c.glf1 == nil {
		return pcm.GLF1Stats{}
	}
	return c.glf1.Stats()
}

// Close closes the connection and stops the watcher; it may be called twice.
func (c *Conn) Close() error {
	c.mu.Lock()
	if c.closed {
		c.mu.Unlock()
		return nil
	}
	c.closed = true
	close(c.stop)
	var err error
	if c.conn != nil {
		err = c.conn.Close()
		c.conn = nil
	}
	c.mu.Unlock()
	c.watcher.Wait()
	return err
}

// ReadFrames delivers frames from the current connection, (re)dialling as
// needed; see Conn.
func (c *Conn) ReadFrames(dst []float64) (int, error) {
	for {
		if c.ctx.Err() != nil {
			return 0, io.EOF
		}
		if !c.up {
			if err := c.connect(); err != nil {
				return 0, err
			}
		}
		if c.pending > 0 {
			c.gap.Missing, c.pending = c.pending, 0
			return 0, &c.gap
		}
		n, err := c.fr.ReadFrames(dst)
		if err == nil || asGap(err) {
			return n, err
		}
		if errors.Is(err, pcm.ErrFormat) {
			return n, err
		}
		c.lost(err)
		if n > 0 {
			return n, nil
		}
	}
}

func asGap(err error) bool {
	_, ok := err.(*stream.Gap)
	return ok
}

// lost closes the connection after a read error or the sender's EOF.
func (c *Conn) lost(err error) {
	c.mu.Lock()
	if c.conn != nil {
		_ = c.conn.Close()
		c.conn = nil
	}
	c.mu.Unlock()
	c.up = false
	c.downAt = c.now()
	if c.ctx.Err() == nil {
		c.log.Warn("pcm link lost; redialling", "addr", c.cfg.Addr, "err", err)
	}
}

// connect dials until it succeeds or ctx ends (then io.EOF), waiting
// between attempts with doubling backoff.
func (c *Conn) connect() error {
	for {
		conn, err := c.cfg.Dial(c.ctx, c.cfg.Addr)
		if err == nil {
			c.mu.Lock()
			if c.closed || c.ctx.Err() != nil {
				c.mu.Unlock()
				_ = conn.Close()
				return io.EOF
			}
			c.conn = conn
			c.mu.Unlock()
			if c.glf1 != nil {
				c.glf1.Reset(conn)
			} else {
				c.raw.Reset(conn)
			}
			c.backoff = c.cfg.MinBackoff
			if c.everUp {
				c.redials++
				if c.raw != nil { // GLF1 counts its own loss from the frame index
					d := c.now().Sub(c.downAt).Seconds()
					c.pending = uint64(max(1, math.Round(d*c.cfg.SampleRate)))
				}
				c.log.Info("pcm link re-established", "addr", c.cfg.Addr, "redials", c.redials)
			}
			c.everUp, c.up = true, true
			return nil
		}
		if c.ctx.Err() != nil {
			return io.EOF
		}
		if now := c.now(); now.Sub(c.lastWarn) >= time.Minute {
			c.lastWarn = now
			c.log.Warn("pcm sender unreachable; retrying", "addr", c.cfg.Addr, "err", err, "retry_in", c.backoff.String())
		}
		t := time.NewTimer(c.backoff)
		select {
		case <-c.ctx.Done():
			t.Stop()
			return io.EOF
		case <-c.stop:
			t.Stop()
			return io.EOF
		case <-t.C:
		}
		c.backoff = min(2*c.backoff, c.cfg.MaxBackoff)
	}
}
