package store_test

import (
	"fmt"
	"math"
	"os"
	"path/filepath"
	"time"

	"github.com/gridloupe/gridloupe/metrics"
	"github.com/gridloupe/gridloupe/store"
)

// Larkfield office tower, air-handler cabinet AH-4 (invented): one 277 V
// phase voltage and its current, orders 1, 5 and 7.
func exampleSetup() *metrics.Setup {
	return &metrics.Setup{
		Channels: []metrics.Channel{
			{Name: "va", Kind: metrics.Voltage, Phase: 'a'},
			{Name: "ia", Kind: metrics.Current, Phase: 'a'},
		},
		Orders: []int{1, 5, 7}, Wiring: metrics.SinglePhase, NominalV: 277, ILA: 40,
		Pairs: []metrics.Pair{{Phase: 'a', V: 0, I: 1}}, Neutral: -1,
		VIdx: [3]int{0, -1, -1}, IIdx: [3]int{1, -1, -1},
	}
}

func exampleRecord(start time.Time) *metrics.Record {
	nan := math.NaN()
	h := func(rms ...float64) []metrics.Harmonic {
		return []metrics.Harmonic{{H: 1, RMS: rms[0], PhaseDeg: 0}, {H: 5, RMS: rms[1], PhaseDeg: -118.2}, {H: 7, RMS: rms[2], PhaseDeg: nan}}
	}
	return &metrics.Record{
		Interval: metrics.Int10min, Start: start, DurationS: 600, Samples: 6_144_000, FreqHz: 60.01,
		Channels: []metrics.ChannelValues{
			{RMS: 277.4, THDPct: 2.1, THDH50Pct: nan, TDDPct: nan, TDDH50Pct: nan, H: h(277.3, 4.2, 2.9)},
			{RMS: 31.2, THDPct: 24.5, THDH50Pct: nan, TDDPct: 18.4, TDDH50Pct: nan, H: h(30.3, 7.0, 3.8)},
		},
		Phases: []metrics.PhaseValues{{Phase: 'a', P: 8190, P1: 8150, Q1: 2100, S: 8655, PF: 0.946, DPF: 0.968}},
		Total:  metrics.TotalValues{P: 8190, Q1: 2100, S: 8655, Se: 8655, PF: 0.946, DPF: 0.968},
		UnbV:   nan, UnbI: nan,
	}
}

func Example() {
	dir, _ := os.MkdirTemp("", "gridloupe-example")
	defer os.RemoveAll(dir)
	db, err := store.Open(store.Options{Path: filepath.Join(dir, "gridloupe.db"), MaxSizeMB: 16})
	if err != nil {
		fmt.Println(err)
		return
	}
	defer db.Close()
	if err := db.SetLayout(exampleSetup()); err != nil {
		fmt.Println(err)
		return
	}
	start := time.Date(2026, 3, 1, 10, 0, 0, 0, time.UTC)
	if err := db.PutAggregates([]*metrics.Record{exampleRecord(start), exampleRecord(start.Add(10 * time.Minute))}); err != nil {
		fmt.Println(err)
		return
	}
	_ = db.Query(metrics.Int10min, start, start.Add(time.Hour), func(r *metrics.Record) error {
		ia := r.Channels[1]
		fmt.Printf("%s ia %.1f A, h5 %.1f %% (%.1f %% of IL) at %.1f°\n",
			r.Start.Format(time.RFC3339), ia.RMS, ia.H[1].Pct, ia.H[1].PctIL, ia.H[1].PhaseDeg)
		return nil
	})
	// Output:
	// 2026-03-01T10:00:00Z ia 31.2 A, h5 23.1 % (17.5 % of IL) at -118.2°
	// 2026-03-01T10:10:00Z ia 31.2 A, h5 23.1 % (17.5 % of IL) at -118.2°
}

func ExampleDB_Enqueue() {
	dir, _ := os.MkdirTemp("", "gridloupe-example")
	defer os.RemoveAll(dir)
	db, err := store.Open(store.Options{Path: filepath.Join(dir, "gridloupe.db"), MaxSizeMB: 16})
	if err != nil {
		fmt.Println(err)
		return
	}
	defer db.Close()
	db.OutboxCaps(map[store.Class]int{store.ClassTelemetry: 1})
	topic := "gridloupe/larkfield-ah4/ah4-gw1/telemetry/10min"
	seqs, _ := db.Enqueue(
		store.Message{Class: store.ClassTelemetry, Topic: topic, Payload: []byte(`{"seq":1}`)},
		store.Message{Class: store.ClassTelemetry, Topic: topic, Payload: []byte(`{"seq":2}`)},
	)
	fmt.Println("queued", seqs)
	pending, _ := db.Pending(0, 10)
	for _, m := range pending {
		fmt.Println("send", m.Seq, string(m.Payload))
		_ = db.Ack(m.Seq)
	}
	fmt.Println("telemetry lost:", db.Losses()[store.ClassTelemetry])
	// Output:
	// queued [1 2]
	// send 2 {"seq":2}
	// telemetry lost: 1
}

func ExampleOpenReadOnly() {
	dir, _ := os.MkdirTemp("", "gridloupe-example")
	defer os.RemoveAll(dir)
	path := filepath.Join(dir, "gridloupe.db")
	daemon, err := store.Open(store.Options{Path: path})
	if err != nil {
		fmt.Println(err)
		return
	}
	_, err = store.OpenReadOnly(path, 100*time.Millisecond)
	fmt.Println(err != nil)
	_ = daemon.Close()
	ro, err := store.OpenReadOnly(path, 100*time.Millisecond)
	fmt.Println(err)
	_ = ro.Close()
	// Output:
	// true
	// <nil>
}
