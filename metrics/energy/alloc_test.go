//go:build !race

package energy

import (
	"testing"

	"github.com/gridloupe/gridloupe/metrics"
)

// TestMeterWindowAllocs: Meter.Window is the gateway's per-window hook on
// the measurement goroutine, so it allocates nothing (STYLE.md §5), with
// one circuit or several.
func TestMeterWindowAllocs(t *testing.T) {
	s := setup(t)
	r := metrics.NewRecord(s)
	r.DurationS, r.Total.P, r.Total.Q1 = 0.2, 10000, 2000
	one := NewMeter(nil, nil)
	if a := testing.AllocsPerRun(1000, func() { one.Window(r) }); a != 0 {
		t.Errorf("Window, one circuit: %v allocs per call, want 0", a)
	}

	rc := metrics.NewRecord(s)
	rc.DurationS = 0.2
	p1, p2 := metrics.NewRecord(s), metrics.NewRecord(s)
	p1.Total.P, p2.Total.P = 30000, -7500
	rc.Circuits = []metrics.CircuitValues{{Name: "pump1", Rec: p1}, {Name: "pump2", Rec: p2}}
	two := NewMeter([]string{"pump1", "pump2"}, nil)
	if a := testing.AllocsPerRun(1000, func() { two.Window(rc) }); a != 0 {
		t.Errorf("Window, two circuits: %v allocs per call, want 0", a)
	}
	got := two.Readings()
	// closed form: 1001 windows (AllocsPerRun adds a warm-up call) of 0.2 s
	// at 30 kW is 30000·0.2·1001/3600 Wh.
	if want := 30000 * 0.2 * 1001 / 3600; !near(got[0].ImportWh, want) {
		t.Errorf("pump1 import %v Wh, want %v: the hook did not count", got[0].ImportWh, want)
	}
}
