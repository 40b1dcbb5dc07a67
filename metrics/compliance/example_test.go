package compliance_test

import (
	"fmt"
	"time"

	"github.com/gridloupe/gridloupe/metrics"
	"github.com/gridloupe/gridloupe/metrics/compliance"
)

// North Weir pumping station, cabinet DC-2 (invented): one phase, orders 1
// and 5 only, a single 10 min value; far too little data, so the week is
// incomplete, but each line shows its threshold.
func Example() {
	s, err := metrics.NewSetup(metrics.Setup{
		Channels: []metrics.Channel{
			{Name: "va", Kind: metrics.Voltage, Phase: 'a'},
			{Name: "ia", Kind: metrics.Current, Phase: 'a'},
		},
		Orders: []int{1, 5}, Wiring: metrics.SinglePhase, NominalV: 230, ILA: 160, Reference: -1,
	})
	if err != nil {
		panic(err)
	}
	start := time.Date(2026, 3, 2, 0, 0, 0, 0, time.UTC)
	e, err := compliance.New(compliance.Config{Setup: s, NominalV: 230, BusV: 400, IL: 160, Isc: 6100, Start: start})
	if err != nil {
		panic(err)
	}
	r := metrics.NewRecord(s)
	r.Interval, r.Start = metrics.Int10min, start
	r.Channels[0].H[1].RMS = 6.9 // 3 % of 230 V
	r.Channels[1].H[1].RMS = 8.0 // 5 % of 160 A
	if err := e.Add(r); err != nil {
		panic(err)
	}
	res := e.Result()
	fmt.Printf("row %s, verdict %s\n", res.Row, res.Verdict)
	for _, l := range res.Lines {
		if l.Statistic != compliance.DailyP99 {
			fmt.Printf("%s %s %s: %.1f %% < %.1f %%? %s\n", l.Channel, l.Quantity, l.Statistic, l.Value, l.Threshold, l.Verdict)
		}
	}
	// Output:
	// row 20<50, verdict incomplete
	// va h5 weekly_p95_10min: 3.0 % < 5.0 %? incomplete
	// ia h5 weekly_p99_10min: 5.0 % < 10.5 %? incomplete
	// ia h5 weekly_p95_10min: 5.0 % < 7.0 %? incomplete
}
