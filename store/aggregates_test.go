package store

import (
	"math"
	"path/filepath"
	"testing"
	"time"

	"github.com/gridloupe/gridloupe/metrics"
)

// TestStoredRecordsAggregateDPF: 10 min records read back from the store
// aggregate into a 2 h total dpf from their P1⁺ and Q1⁺ (DESIGN: dpf from
// the aggregated P1 and Q1). A balanced load with P1⁺ = 0.8·S1⁺ and
// Q1⁺ = 0.6·S1⁺ has dpf = 0.8 (closed form cos φ).
func TestStoredRecordsAggregateDPF(t *testing.T) {
	t.Parallel()
	s := setup8([]int{1, 5, 7})
	db := openTest(t, Options{Path: filepath.Join(t.TempDir(), "a.db")})
	if err := db.SetLayout(s); err != nil {
		t.Fatal(err)
	}
	base := time.Date(2026, 3, 1, 0, 0, 0, 0, time.UTC)
	var recs []*metrics.Record
	for i := range 12 {
		r := metrics.NewRecord(s)
		r.Interval, r.Start, r.DurationS, r.Samples = metrics.Int10min, base.Add(time.Duration(i)*10*time.Minute), 600, 6144000
		r.Total = metrics.TotalValues{P: 80000, Q1: 60000, S: 100000, Se: 100000, Se1: 100000, Ve: 230, Ie: 145, PF: 0.8, DPF: 0.8,
			P1Pos: 80000, Q1Pos: 60000}
		recs = append(recs, r)
	}
	if err := db.PutAggregates(recs); err != nil {
		t.Fatal(err)
	}
	a := metrics.NewAggregator(s)
	if err := db.Query(metrics.Int10min, time.Time{}, time.Time{}, func(r *metrics.Record) error { a.Add(r); return nil }); err != nil {
		t.Fatal(err)
	}
	out := metrics.NewRecord(s)
	a.Result(out)
	// float32 storage: 6e-8 relative; 1e-6 is ample
	if math.Abs(out.Total.DPF-0.8) > 1e-6 {
		t.Errorf("2 h total dpf %v from stored records, want 0.8", out.Total.DPF)
	}
}
