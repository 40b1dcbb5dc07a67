package live

import (
	"slices"
	"testing"
	"time"

	"github.com/gridloupe/gridloupe/metrics"
)

func singlePhase(t *testing.T, il float64) *metrics.Setup {
	t.Helper()
	s, err := metrics.NewSetup(metrics.Setup{
		Channels: []metrics.Channel{{Name: "va", Kind: metrics.Voltage, Phase: 'a'}, {Name: "ia", Kind: metrics.Current, Phase: 'a'}},
		Orders:   []int{1, 5, 7}, Wiring: metrics.SinglePhase, NominalV: 230, ILA: il})
	if err != nil {
		t.Fatal(err)
	}
	return s
}

func TestBoardKeepsACopy(t *testing.T) {
	s := singlePhase(t, 160)
	now := time.Date(2026, 3, 1, 10, 0, 0, 0, time.UTC)
	b := New(s, func() time.Time { return now }, nil)
	if r, _ := b.Latest(metrics.Int3s); r != nil {
		t.Fatal("a new board holds a record")
	}
	if _, ok := b.Age(metrics.Int3s); ok {
		t.Fatal("age before the first record")
	}
	r := metrics.NewRecord(s)
	r.Interval, r.FreqHz = metrics.Int3s, 50.02
	b.Put(r, []string{"tdd-ia"})
	r.FreqHz = 49.9 // the producer reuses its record
	now = now.Add(1500 * time.Millisecond)
	got, _ := b.Latest(metrics.Int3s)
	if got.FreqHz != 50.02 {
		t.Errorf("board record changed with the producer's: %v", got.FreqHz)
	}
	if a, ok := b.Age(metrics.Int3s); !ok || a != 1.5 {
		t.Errorf("age = %v, %v; want 1.5 s (the clock moved 1.5 s)", a, ok)
	}
	if act := b.Active(); !slices.Equal(act, []string{"tdd-ia"}) {
		t.Errorf("active = %v", act)
	}
	r.Interval = metrics.Int200ms
	b.Put(r, nil) // ignored: the board keeps 3 s and 10 min only
	if act := b.Active(); len(act) != 1 {
		t.Errorf("a 200 ms record changed the board: active %v", act)
	}
}

func TestFields(t *testing.T) {
	keys := func(fs []Field) []string {
		var k []string
		for _, f := range fs {
			k = append(k, f.Key)
		}
		return k
	}
	got := keys(Fields(singlePhase(t, 0)))
	if slices.Contains(got, "ia.tdd_pct") || slices.Contains(got, "va.thd_h50_pct") || slices.Contains(got, "unbalance.voltage_pct") {
		t.Errorf("fields without IL, all orders or three phases: %v (src: DESIGN.md: a key that does not apply is absent)", got)
	}
	got = keys(Fields(singlePhase(t, 160)))
	for _, k := range []string{"freq_hz", "total.pf", "phase.a.dpf", "va.rms", "ia.tdd_pct"} {
		if !slices.Contains(got, k) {
			t.Errorf("%s missing from %v (src: DESIGN.md key paths)", k, got)
		}
	}
}
