package stream

import (
	"context"
	"fmt"
	"math"
	"math/rand/v2"
	"testing"
	"time"

	"github.com/gridloupe/gridloupe/metrics"
)

// IEC 61000-4-7 class I harmonic accuracy (from memory, REFERENCE §3):
// voltage ±5 % of the reading at or above 1 % of nominal, else ±0.05 % of
// nominal; current ±5 % of the reading at or above 3 % of nominal, else
// ±0.15 % of nominal.
const (
	classIRel     = 0.05
	classIVFloor  = 0.01   // of nominal voltage: the reading-relative limit applies above
	classIVAbs    = 0.0005 // of nominal voltage, below the floor
	classIIFloor  = 0.03
	classIIAbs    = 0.0015
	ownBoundShare = 0.1 // the project's own bound: one tenth of class I (README "Accuracy")
)

// classI returns the class I limit for a harmonic of true RMS x on a
// channel of nominal nom.
func classI(x, nom float64, voltage bool) float64 {
	floor, abs := classIIFloor, classIIAbs
	if voltage {
		floor, abs = classIVFloor, classIVAbs
	}
	if x >= floor*nom {
		return classIRel * x
	}
	return abs * nom
}

// smallHarmonics returns tones for orders 2–50 with RMS between 0.05 % and
// 3 % of the fundamental at random phases (fixed seed), plus the given
// larger ones.
func smallHarmonics(rng *rand.Rand, fund, ph1 float64, big map[int]float64) []tone {
	ts := []tone{{1, fund, ph1}}
	for h := 2; h <= 50; h++ {
		r := fund * (0.0005 + 0.0295*rng.Float64())
		if b, ok := big[h]; ok {
			r = fund * b
		}
		ts = append(ts, tone{h, r, 360 * rng.Float64()})
	}
	return ts
}

// TestSmallHarmonicsClassI: every order 2–50 of a voltage with 0.05–3 %
// harmonics and of a drive current (20 % 5th, 12 % 7th, 6 % 11th, the rest
// 0.05–3 %) at random phases, at frequencies off nominal across both
// systems' ranges, is within IEC 61000-4-7 class I and within the project's
// own bound of a tenth of it: in every 200 ms window after acquisition, in
// the 3 s values and in the 10 min value (here a 10-minute interval cut
// short at its tick, which aggregates the same way). Clean signals and
// signals with 0.02 % white noise.
func TestSmallHarmonicsClassI(t *testing.T) {
	const fs = 10240.0
	cases := []struct{ nom, f float64 }{
		{50, 42.5}, {50, 47.5}, {50, 49.83}, {50, 49.9}, {50, 50.02}, {50, 50.05}, {50, 53}, {50, 57.5},
		{60, 51}, {60, 59.95}, {60, 60.02}, {60, 62}, {60, 69},
	}
	seconds := 21.0
	if testing.Short() {
		seconds = 5.2
	}
	for _, tc := range cases {
		for _, noise := range []float64{0, 0.0002} {
			if testing.Short() && noise > 0 && tc.f != 49.83 && tc.f != 59.95 && tc.f != 69 {
				continue // -short: noisy signals at three frequencies only
			}
			t.Run(fmt.Sprintf("%g_Hz_noise_%g", tc.f, noise), func(t *testing.T) {
				t.Parallel()
				const vNom, iNom = 230.0, 100.0
				rng := rand.New(rand.NewPCG(uint64(tc.f*100), 9))
				v := synthChan{tones: smallHarmonics(rng, vNom, 0, nil), noise: noise * vNom}
				i := synthChan{tones: smallHarmonics(rng, iNom, -30, map[int]float64{5: 0.2, 7: 0.12, 11: 0.06}), noise: noise * iNom}
				s := setupOf(t, metrics.SinglePhase, vNom, 0, true, nil,
					metrics.Channel{Name: "v", Kind: metrics.Voltage, Phase: 'a'},
					metrics.Channel{Name: "i", Kind: metrics.Current, Phase: 'a'})
				// start 4.6 s before a 10-minute tick; aggregation starts after
				// acquisition (under 0.75 s): a 3 s value, then the 10 min
				// value of the interval the tick cuts short
				base := time.Date(2026, 3, 1, 9, 59, 55, 400_000_000, time.UTC)
				p, err := New(Config{Setup: s, SampleRate: fs, NominalHz: tc.nom, Base: base})
				if err != nil {
					t.Fatal(err)
				}
				iv := NewIntervals(s, metrics.Int3s, metrics.Int10min)
				levels := map[metrics.Interval]int{}
				var worst [2]float64 // share of class I used, voltage and current
				check := func(r *metrics.Record, what string) {
					for c, ch := range []synthChan{v, i} {
						for _, tn := range ch.tones[1:] {
							got := r.Channels[c].H[tn.h-1]
							if got.H != tn.h {
								t.Fatalf("order %d at index %d", got.H, tn.h-1)
							}
							nom := vNom
							if c == 1 {
								nom = iNom
							}
							lim := classI(tn.rms, nom, c == 0)
							d := math.Abs(got.RMS - tn.rms)
							worst[c] = max(worst[c], d/lim)
							if !(d <= lim) {
								t.Errorf("%s %v: channel %d order %d: %.5g, want %.5g ± %.3g (IEC 61000-4-7 class I, from memory)", what, r.Start, c, tn.h, got.RMS, tn.rms, lim)
							} else if !(d <= ownBoundShare*lim) {
								t.Errorf("%s %v: channel %d order %d: %.5g, want %.5g ± %.3g (the project's own bound, a tenth of class I)", what, r.Start, c, tn.h, got.RMS, tn.rms, ownBoundShare*lim)
							}
						}
					}
				}
				windows := 0
				emitAgg := func(r *metrics.Record) error {
					if r.Flags&metrics.FlagNoLock == 0 {
						levels[r.Interval]++
						check(r, r.Interval.String())
					}
					return nil
				}
				src := newSynth(fs, constFreq(tc.f), seconds, v, i)
				err = p.Run(context.Background(), src, func(r *metrics.Record) error {
					windows++
					if windows > acquireWindows {
						if r.Flags&metrics.FlagNoLock != 0 {
							t.Errorf("window %d: no_lock on a steady %g Hz supply", windows, tc.f)
						}
						check(r, "200ms")
						return iv.Add(r, emitAgg)
					}
					return nil
				})
				if err != nil {
					t.Fatal(err)
				}
				if err := iv.Flush(emitAgg); err != nil {
					t.Fatal(err)
				}
				if levels[metrics.Int3s] == 0 || levels[metrics.Int10min] == 0 {
					t.Errorf("locked values per level %v, want 3s and 10min", levels)
				}
				t.Logf("worst share of class I used: voltage %.3g, current %.3g", worst[0], worst[1])
			})
		}
	}
}
