package stream

import (
	"errors"
	"fmt"
	"io"

	"github.com/gridloupe/gridloupe/metrics"
)

// Gap is the error a live or framed source returns from ReadFrames when
// samples are missing from its stream: a dropped link, a device overrun, a
// lost frame. The frames returned with it come before the hole; Missing
// frames are absent after them. The source goes on delivering after a Gap,
// so it is not an end: the pipeline keeps time across the hole (the next
// sample's time is base + index/fs with the missing frames counted in the
// index), emits every window that holds missing samples with the flag gap
// and null values, and lets the tracker re-acquire. Nothing is stitched.
type Gap struct {
	Missing uint64 // frames missing after the frames returned with the error
}

// Error says how many frames are missing.
func (g *Gap) Error() string { return fmt.Sprintf("stream: %d frames missing", g.Missing) }

// asGap returns err as a *Gap (also when wrapped), or nil. The common
// cases (nil, io.EOF, a bare *Gap) cost no allocation.
func asGap(err error) *Gap {
	switch e := err.(type) {
	case nil:
		return nil
	case *Gap:
		return e
	}
	if err == io.EOF {
		return nil
	}
	var g *Gap
	if errors.As(err, &g) {
		return g
	}
	return nil
}

// Missing returns the number of frames reported missing by the source so far.
func (p *Pipeline) Missing() uint64 { return p.missing }

// skipGap advances the sample index over m missing frames, window by window:
// every window that holds some of them is emitted (by finish) with the flag
// gap and null values. The zero-crossing detector forgets its state, so no
// cycle is measured across the hole.
func (p *Pipeline) skipGap(m uint64, emit func(*metrics.Record) error) error {
	if m == 0 {
		return nil
	}
	p.missing += m
	p.trk.zc.skip(m, uint64(p.fs/p.nomHz*3))
	for m > 0 {
		k := min(uint64(p.winN-p.filled), m)
		p.filled += int(k)
		p.idx += k
		p.winMissing += int(k)
		m -= k
		if err := p.eventsSkip(k, emit); err != nil {
			return err
		}
		if p.filled == p.winN {
			if err := p.finish(emit); err != nil {
				return err
			}
		}
	}
	return nil
}

// gapNull marks every channel of a window that holds missing samples as
// unusable, so that metrics.Compute nulls all its values (the bad_sample
// path). It returns whether a channel was already bad from a NaN/Inf input
// sample, which keeps its own flag.
func (p *Pipeline) gapNull() (realBad bool) {
	if p.winMissing == 0 {
		return false
	}
	for c := range p.in.Ch {
		ch := &p.in.Ch[c]
		realBad = realBad || ch.Bad
		ch.Bad = true
	}
	return realBad
}

// gapFlag finishes a window's record after Compute: a window holding missing
// samples carries gap (not bad_sample, unless an input sample was NaN/Inf)
// and counts only the samples it received.
func (p *Pipeline) gapFlag(rec *metrics.Record, realBad bool) {
	if p.winMissing == 0 {
		return
	}
	rec.Flags |= metrics.FlagGap
	if !realBad {
		rec.Flags &^= metrics.FlagBadSample
	}
	rec.Samples -= uint64(p.winMissing)
	p.winMissing = 0
}

// skip advances the detector over m missing samples and forgets its state:
// the filter restarts and settles again, and no crossing, window span or
// 10 s cycle spans the hole (IEC 61000-4-30 counts only whole cycles).
func (c *crossings) skip(m, settle uint64) {
	c.idx += m
	c.f1.z1, c.f1.z2, c.f2.z1, c.f2.z2 = 0, 0, 0, 0
	c.prev = 0
	c.settle = settle
	c.resetCounts()
}
