package main

import (
	"fmt"
	"strings"
	"time"

	"github.com/gridloupe/gridloupe/metrics/events"
	"github.com/gridloupe/gridloupe/stream/sim"
)

// demoDisturbances are the demo's supply events when the config sets no
// source.disturbances (invented): a 140 ms dip to 55 % on phases a and b at
// 4 simulated minutes, a 300 ms swell to 116 % on c at 11.
func demoDisturbances() []sim.Dip {
	return []sim.Dip{{At: 4 * time.Minute, Depth: 0.55, Duration: 140 * time.Millisecond, Phases: "ab"},
		{At: 11 * time.Minute, Depth: 1.16, Duration: 300 * time.Millisecond, Phases: "c"}}
}

// event prints one stored voltage event in the live table.
func (t *liveTable) event(r events.Record) {
	ext := "residual"
	if r.Kind == events.Swell {
		ext = "maximum"
	}
	fmt.Fprintf(t.w, ">> EVENT   %-13s %.0f ms on %s, %s %.1f %% at %s (waveform: waveform --id %s)\n", r.Kind, r.DurationS*1000,
		strings.Join(r.Channels, ","), ext, r.ExtremePct, r.Start.UTC().Format("15:04:05.000"), r.ID)
	t.rows++
}
