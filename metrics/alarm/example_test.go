package alarm_test

import (
	"fmt"
	"time"

	"github.com/gridloupe/gridloupe/metrics"
	"github.com/gridloupe/gridloupe/metrics/alarm"
)

// northWeir is the invented demo site: North Weir pumping station, cabinet
// DC-2, 230/400 V wye, IL 160 A, ISC 6.1 kA, all orders.
func northWeir() *metrics.Setup {
	var orders []int
	for h := 1; h <= metrics.MaxOrder; h++ {
		orders = append(orders, h)
	}
	s, err := metrics.NewSetup(metrics.Setup{
		Channels: []metrics.Channel{
			{Name: "va", Kind: metrics.Voltage, Phase: 'a'}, {Name: "vb", Kind: metrics.Voltage, Phase: 'b'},
			{Name: "vc", Kind: metrics.Voltage, Phase: 'c'}, {Name: "ia", Kind: metrics.Current, Phase: 'a'},
			{Name: "ib", Kind: metrics.Current, Phase: 'b'}, {Name: "ic", Kind: metrics.Current, Phase: 'c'},
		},
		Orders: orders, Wiring: metrics.Wye, NominalV: 230, ILA: 160, Reference: -1,
	})
	if err != nil {
		panic(err)
	}
	return s
}

// A total power-factor rule on 3 s records, with a deadband of 0.02 and a
// 6 s on delay in sample time.
func ExampleEvaluator_Evaluate() {
	s := northWeir()
	e, err := alarm.New([]alarm.Rule{{
		Name: "low-pf", Metric: alarm.MetricPF, Target: alarm.Target{Channel: -1, Total: true},
		Level: metrics.Int3s, Threshold: 0.90, Deadband: 0.02, OnDelay: 6 * time.Second,
		Severity: "warning", Text: "total power factor below 0.90",
	}}, s, nil)
	if err != nil {
		fmt.Println(err)
		return
	}
	start := time.Date(2026, 3, 1, 10, 0, 0, 0, time.UTC)
	r := metrics.NewRecord(s)
	r.Interval, r.DurationS = metrics.Int3s, 3
	var trs []alarm.Transition
	for k, pf := range []float64{0.95, 0.88, 0.87, 0.86, 0.91, 0.93} {
		r.Start = start.Add(time.Duration(k) * 3 * time.Second)
		r.Total.PF = pf
		trs = e.Evaluate(r, trs[:0])
		for _, tr := range trs {
			fmt.Printf("%s %s raised=%v pf=%.2f\n", tr.Time.Format("15:04:05"), tr.Rule, tr.Raised, tr.Value)
		}
	}
	fmt.Println("active:", e.Active())
	// Output:
	// 10:00:09 low-pf raised=true pf=0.87
	// 10:00:18 low-pf raised=false pf=0.93
	// active: []
}

// The example config's default rules for North Weir.
func ExampleDefaultRules() {
	s := northWeir()
	for _, r := range alarm.DefaultRules(s, 160, 6100, 230, []int{3}, []int{0}) {
		op := "below"
		if r.Above {
			op = "above"
		}
		fmt.Printf("%s: %s %s %.2f at %s\n", r.Name, r.Metric, op, r.Threshold, r.Level)
	}
	// Output:
	// current-distortion-ia: tdd_h50_pct above 8.00 at 10min
	// voltage-distortion-va: thd_h50_pct above 8.00 at 10min
	// power-factor: pf below 0.90 at 10min
}

// Restoring persisted states: a raised alarm stays raised without a new
// transition.
func ExampleNew() {
	s := northWeir()
	rules := alarm.DefaultRules(s, 160, 6100, 230, []int{3}, nil)
	restored := map[string]alarm.State{"current-distortion-ia": {Raised: true}}
	e, err := alarm.New(rules, s, restored)
	if err != nil {
		fmt.Println(err)
		return
	}
	fmt.Println(e.Active())
	// Output:
	// [current-distortion-ia]
}
