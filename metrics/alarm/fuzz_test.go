package alarm

import (
	"math"
	"testing"
	"time"

	"github.com/gridloupe/gridloupe/metrics"
)

// FuzzEvaluate feeds arbitrary value series (and light-load marks) to an
// above rule with a deadband and delays, and checks the invariants of the
// Evaluator doc against a small model: a transition happens exactly when a
// valid record meets the condition (above the threshold to raise, below
// threshold − deadband to clear) and the run of valid records meeting it,
// bridged over nulls and light load, has lasted the delay.
func FuzzEvaluate(f *testing.F) {
	f.Add([]byte{90, 90, 90, 70, 70, 70, 79, 81, 0xff, 90})
	f.Add([]byte{0xfe, 85, 85, 74, 74, 74, 74, 74})
	f.Fuzz(func(t *testing.T, data []byte) {
		s := northWeir(t)
		const th, db = 8.0, 0.5
		onD, offD := 400*time.Millisecond, 600*time.Millisecond
		ru := Rule{Name: "f", Metric: MetricTDDH50, Target: Target{Channel: chIA}, Level: metrics.Int200ms,
			Above: true, Threshold: th, Deadband: db, OnDelay: onD, OffDelay: offD,
			MinLoad: 32, LoadChannels: []int{chIA}}
		e, err := New([]Rule{ru}, s, nil)
		if err != nil {
			t.Fatal(err)
		}
		if len(data) > 2000 {
			data = data[:2000] // bounded
		}
		r := metrics.NewRecord(s)
		r.Interval, r.DurationS = metrics.Int200ms, 0.2
		raised := false
		var condSince time.Time // start of the current run of condition-meeting valid records
		inRun := false
		for k, b := range data {
			r.Start = t0.Add(time.Duration(k) * 200 * time.Millisecond)
			end := r.Start.Add(200 * time.Millisecond)
			v := float64(b) / 10 // 0 .. 25.5 %
			light := false
			switch b {
			case 0xff:
				v = math.NaN()
			case 0xfe:
				light = true
			}
			r.Channels[chIA].TDDH50Pct = v
			r.Channels[chIA].RMS = 100
			if light {
				r.Channels[chIA].RMS = 10
			}
			valid := !math.IsNaN(v) && !light
			meets := valid && ((!raised && v > th) || (raised && v < th-db))
			if valid && !meets {
				inRun = false
			}
			if meets && !inRun {
				inRun, condSince = true, r.Start
			}
			delay := onD
			if raised {
				delay = offD
			}
			want := meets && end.Sub(condSince) >= delay // the model of the Evaluator doc
			trs := e.Evaluate(r, nil)
			if len(trs) > 1 || (len(trs) == 1) != want {
				t.Fatalf("record %d (v %v light %v raised %v since %v): transitions %+v; want %v",
					k, v, light, raised, condSince, trs, want)
			}
			if len(trs) == 0 {
				continue
			}
			tr := trs[0]
			if tr.Raised == raised || tr.Value != v || !tr.Time.Equal(end) {
				t.Fatalf("record %d: transition %+v from raised=%v at value %v", k, tr, raised, v)
			}
			raised, inRun = tr.Raised, false
		}
	})
}
