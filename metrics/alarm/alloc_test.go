//go:build !race

package alarm

import (
	"math"
	"runtime"
	"testing"
	"time"

	"github.com/gridloupe/gridloupe/metrics"
	"github.com/gridloupe/gridloupe/metrics/events"
)

// TestEvaluateAllocs proves STYLE.md §5 for Evaluate: no allocation when
// dst has room, also on records that raise and clear every rule.
func TestEvaluateAllocs(t *testing.T) {
	e, recs := benchSetup(t)
	dst := make([]Transition, 0, 64)
	k := 0
	n := testing.AllocsPerRun(200, func() {
		dst = e.Evaluate(recs[k%len(recs)], dst[:0])
		k++
	})
	if n != 0 {
		t.Fatalf("Evaluate: %v allocs per call, want 0", n)
	}
	if k == 0 || cap(dst) != 64 {
		t.Fatal("did not run")
	}
}

func BenchmarkEvaluate(b *testing.B) {
	e, recs := benchSetup(b)
	dst := make([]Transition, 0, 64)
	b.ReportAllocs()
	k, total := 0, 0
	for b.Loop() {
		dst = e.Evaluate(recs[k%len(recs)], dst[:0])
		total += len(dst)
		k++
	}
	if k > 1 && total == 0 {
		b.Fatal("no transitions")
	}
}

// benchSetup returns the North Weir defaults at the 200 ms level (plus
// per-harmonic and per-phase rules) and two records that raise and clear them.
func benchSetup(tb testing.TB) (*Evaluator, []*metrics.Record) {
	tb.Helper()
	s := northWeir(tb)
	rules := DefaultRules(s, 160, 6100, 230, []int{chIA, chIB, chIC}, []int{chVA, chVB, chVC})
	for h := 5; h <= 13; h += 2 {
		rules = append(rules, Rule{Name: "h" + string(rune('0'+h%10)) + "-ia", Metric: MetricPctIL, Harmonic: h,
			Target: Target{Channel: chIA}, Above: true, Threshold: 3})
	}
	rules = append(rules, Rule{Name: "dpf-b", Metric: MetricDPF, Target: Target{Channel: -1, Phase: 'b'}, Threshold: 0.9})
	for i := range rules {
		rules[i].Level = metrics.Int200ms
		rules[i].OnDelay, rules[i].OffDelay = 0, 0
	}
	e, err := New(rules, s, nil)
	if err != nil {
		tb.Fatal(err)
	}
	recs := series(s, metrics.Int200ms, 0.2, 2, 100)
	for k, r := range recs {
		v := 20.0 // above every threshold
		if k == 1 {
			v = 0.1 // below every threshold
		}
		for i := range r.Channels {
			cv := &r.Channels[i]
			cv.THDH50Pct, cv.TDDH50Pct = v, v
			for j := range cv.H {
				cv.H[j].PctIL = v
			}
		}
		r.Total.PF = v / 20 // 1 and 0.005
		for j := range r.Phases {
			r.Phases[j].DPF = v / 20
		}
	}
	return e, recs
}

// TestEventClearAllocs: Evaluate allocates nothing when it clears an event
// rule either (runtime.MemStats around each clearing call: AllocsPerRun
// would average one allocation away over the non-clearing runs).
func TestEventClearAllocs(t *testing.T) {
	ru := Rule{Name: "ev", Metric: MetricEvent, Target: Target{Channel: -1}}
	e, err := New([]Rule{ru}, northWeir(t, 1), nil)
	if err != nil {
		t.Fatal(err)
	}
	dst := make([]Transition, 0, 4)
	rec := &metrics.Record{Interval: metrics.Int3s, DurationS: 3}
	// GOMAXPROCS 1, as testing.AllocsPerRun does, so another goroutine
	// rarely allocates between the two ReadMemStats; and each clear is
	// measured up to three times, its best count kept: an allocation of
	// Evaluate's own shows in every try, a stray one of the runtime's in one.
	defer runtime.GOMAXPROCS(runtime.GOMAXPROCS(1))
	var m0, m1 runtime.MemStats
	step := 0
	for k := range 20 {
		best := uint64(math.MaxUint64)
		for range 3 {
			at := t0.Add(time.Duration(step) * time.Minute)
			step++
			dst = e.Event(&Event{Kind: events.Dip, Start: at, DurationS: 0.1, Channels: []string{"va"}}, dst[:0])
			rec.Start = at.Add(time.Second)
			runtime.ReadMemStats(&m0)
			dst = e.Evaluate(rec, dst[:0])
			runtime.ReadMemStats(&m1)
			if len(dst) != 1 || dst[0].Raised {
				t.Fatalf("record %d: %+v, want the clear (off_delay 0)", k, dst)
			}
			best = min(best, m1.Mallocs-m0.Mallocs)
		}
		if best != 0 {
			t.Fatalf("clearing Evaluate: %d allocations in each of three tries, want 0", best)
		}
	}
}
