package gateway

import (
	"context"
	"errors"
	"math"
	"path/filepath"
	"sync"
	"testing"
	"time"

	"github.com/gridloupe/gridloupe/metrics"
	"github.com/gridloupe/gridloupe/metrics/events"
	"github.com/gridloupe/gridloupe/stream"
)

// TestLiveDropsAreGaps: a live source whose sink is stalled drops records
// (counted); the first record of a level that gets through after a drop
// carries gap, and a record that follows its predecessor without a hole
// does not (DESIGN "Sources": nothing is silently stitched).
func TestLiveDropsAreGaps(t *testing.T) {
	r := newRig(t, filepath.Join(t.TempDir(), "g.db"), 60)
	var mu sync.Mutex
	var got []metrics.Record
	var g *Gateway
	first := true
	onRec := func(rec *metrics.Record, _ []string) {
		if first {
			first = false
			// stall the sink until the producer has dropped a few records
			deadline := time.Now().Add(10 * time.Second)
			for g.Stats().Dropped < 3 && time.Now().Before(deadline) {
				time.Sleep(time.Millisecond)
			}
		}
		mu.Lock()
		got = append(got, *rec.Clone())
		mu.Unlock()
	}
	var err error
	g, err = New(Config{Pipeline: stream.Config{Setup: r.setup, SampleRate: 6400, NominalHz: 50, Base: t0},
		Source: r.src, Live: true, Store: r.db, QueueLen: 1, CommitEvery: 20 * time.Millisecond, OnRecord: onRec})
	if err != nil {
		t.Fatal(err)
	}
	if err := g.Run(context.Background()); err != nil && !errors.Is(err, ErrSourceEnded) {
		t.Fatal(err)
	}
	if g.Stats().Dropped < 3 {
		t.Fatalf("dropped %d records, want at least 3 with a stalled sink", g.Stats().Dropped)
	}
	var prev *metrics.Record
	gaps := 0
	for i := range got {
		rec := &got[i]
		if rec.Interval != metrics.Int3s {
			continue
		}
		if prev != nil {
			end := prev.Start.Add(time.Duration(prev.DurationS * float64(time.Second)))
			hole := rec.Start.Sub(end) > time.Millisecond
			if hole != (rec.Flags&metrics.FlagGap != 0) {
				t.Errorf("3 s record at %v after one ending %v: hole %v but flags %v", rec.Start, end, hole, rec.Flags.Names())
			}
			if hole {
				gaps++
			}
		}
		prev = rec
	}
	if gaps == 0 {
		t.Error("no 3 s record after a dropped one: the test did not exercise the drop path")
	}
}

// dipTrain is a levelSource with va at 60 % for 100 ms every 500 ms from
// 1 s on: a dip each (closed form: (seconds-1)/0.5 of them).
func dipTrain(limit int) *levelSource {
	return &levelSource{limit: limit, a: func(t float64) float64 {
		if t >= 1 && math.Mod(t-1, 0.5) < 0.1 {
			return 138
		}
		return 230
	}}
}

// TestLiveEventsLostAreCounted: a live source whose store goroutine is
// stalled drops voltage events rather than block, and counts each one in
// Stats.EventsLost: stored and lost together are every dip the source made.
func TestLiveEventsLostAreCounted(t *testing.T) {
	r := newRig(t, filepath.Join(t.TempDir(), "g.db"), 1)
	ec := events.DefaultConfig()
	const dips = 20 // dipTrain over 11 s: (11-1)/0.5
	var g *Gateway
	first := true
	onEvent := func(events.Record) {
		if first {
			first = false
			deadline := time.Now().Add(10 * time.Second)
			for g.Stats().EventsLost == 0 && time.Now().Before(deadline) {
				time.Sleep(time.Millisecond)
			}
		}
	}
	var err error
	g, err = New(Config{Pipeline: stream.Config{Setup: r.setup, SampleRate: 6400, NominalHz: 50, Base: t0, Events: &ec},
		Source: dipTrain(11 * 6400), Live: true, Store: r.db, CommitEvery: 20 * time.Millisecond, OnEvent: onEvent})
	if err != nil {
		t.Fatal(err)
	}
	if err := g.Run(context.Background()); err != nil {
		t.Fatal(err)
	}
	stored := 0
	if err := r.db.Events(time.Time{}, time.Time{}, func(events.Record) error { stored++; return nil }); err != nil {
		t.Fatal(err)
	}
	lost := g.Stats().EventsLost
	if lost == 0 || stored+int(lost) != dips {
		t.Errorf("%d events stored, %d counted lost; want some lost and %d in all", stored, lost, dips)
	}
}
