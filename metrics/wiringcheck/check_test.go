package wiringcheck

import (
	"encoding/json"
	"math"
	"testing"

	"github.com/gridloupe/gridloupe/metrics"
)

// record builds a wye record from fundamentals: RMS and angle per channel
// (va, vb, vc, ia, ib, ic), as an aggregate would carry them.
func record(t *testing.T, rms, deg [6]float64) (*metrics.Setup, *metrics.Record) {
	t.Helper()
	ch := []metrics.Channel{
		{Name: "va", Kind: metrics.Voltage, Phase: 'a'}, {Name: "vb", Kind: metrics.Voltage, Phase: 'b'},
		{Name: "vc", Kind: metrics.Voltage, Phase: 'c'}, {Name: "ia", Kind: metrics.Current, Phase: 'a'},
		{Name: "ib", Kind: metrics.Current, Phase: 'b'}, {Name: "ic", Kind: metrics.Current, Phase: 'c'},
	}
	s, err := metrics.NewSetup(metrics.Setup{Channels: ch, Orders: []int{1}, Wiring: metrics.Wye, NominalV: 230, Reference: -1})
	if err != nil {
		t.Fatal(err)
	}
	r := metrics.NewRecord(s)
	for i := range r.Channels {
		r.Channels[i].RMS = rms[i]
		r.Channels[i].H[0].RMS = rms[i]
		r.Channels[i].H[0].PhaseDeg = deg[i]
	}
	return s, r
}

// TestCheckShape: an ok report marshals with an empty findings list (not
// null), and a null angle (a reference without lock) judges no CT rather
// than guessing. src: DESIGN Wiring check JSON; DESIGN Conventions (null
// angles without lock).
func TestCheckShape(t *testing.T) {
	t.Parallel()
	s, r := record(t, [6]float64{230, 230, 230, 100, 100, 100}, [6]float64{0, -120, 120, -20, -140, 100})
	rep := Check(s, r, Options{NominalV: 230, LoadA: 8})
	b, _ := json.Marshal(rep)
	if string(b) != `{"verdict":"ok","rotation":"abc","findings":[]}` {
		t.Errorf("got %s", b)
	}
	nan := math.NaN()
	s, r = record(t, [6]float64{230, 230, 230, 100, 100, 100}, [6]float64{nan, nan, nan, nan, nan, nan})
	if rep := Check(s, r, Options{NominalV: 230, LoadA: 8}); rep.Verdict != VerdictCheck || rep.Rotation != "" ||
		len(rep.Findings) != 1 || rep.Findings[0].Kind != NoAngles {
		t.Errorf("null angles: %+v, want one no_angles finding and no rotation", rep)
	}
}
