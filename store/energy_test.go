package store

import (
	"math"
	"path/filepath"
	"testing"
	"time"
)

func TestEnergyRoundTripAndMonotonic(t *testing.T) {
	path := filepath.Join(t.TempDir(), "e.db")
	db, err := Open(Options{Path: path})
	if err != nil {
		t.Fatal(err)
	}
	if e, err := db.Energy(); err != nil || len(e) != 0 {
		t.Fatalf("empty store: %v, %v", e, err)
	}
	at := time.Date(2026, 3, 14, 10, 15, 0, 0, time.UTC)
	e1 := Energy{Circuit: "main", ImportWh: 123456.789, ExportWh: 12.5, VarhQ: [4]float64{1, 2, 3, 4}}
	m1 := DemandMonth{Month: "2026-03", MaxA: [3]float64{150.25, 151, math.NaN()}, MaxW: 98000, At: at}
	if err := db.PutEnergy([]Energy{e1}, []DemandMonth{m1}); err != nil {
		t.Fatal(err)
	}
	// A lower counter (a meter that lost its state) never lowers the stored one.
	if err := db.PutEnergy([]Energy{{Circuit: "main", ImportWh: 5}}, nil); err != nil {
		t.Fatal(err)
	}
	if err := db.Close(); err != nil {
		t.Fatal(err)
	}
	db, err = OpenReadOnly(path, time.Second)
	if err != nil {
		t.Fatal(err)
	}
	defer db.Close()
	es, err := db.Energy()
	if err != nil || len(es) != 1 || es[0] != e1 {
		t.Errorf("energy after reopen %+v, %v; want %+v (README: counters never go backwards)", es, err, e1)
	}
	ms, err := db.DemandMonths()
	if err != nil || len(ms) != 1 || ms[0].Month != "2026-03" || ms[0].MaxA[0] != 150.25 || !math.IsNaN(ms[0].MaxA[2]) || !ms[0].At.Equal(at) {
		t.Errorf("months after reopen %+v, %v", ms, err)
	}
}
