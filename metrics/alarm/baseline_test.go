package alarm

import (
	"encoding/json"
	"testing"
	"time"

	"github.com/gridloupe/gridloupe/metrics"
)

// ageingRule: ia's TDD (orders 2-50) 5 points of IL above its baseline at
// the same load, learned over the first hour of 10 min values (a test
// rule; common practice, no source).
func ageingRule() Rule {
	return Rule{Name: "reactor-ageing-ia", Metric: MetricTDDH50, Target: Target{Channel: chIA}, Level: metrics.Int10min,
		Above: true, Threshold: 5, Deadband: 1, OnDelay: 20 * time.Minute, OffDelay: 20 * time.Minute,
		Baseline: &Baseline{Learn: time.Hour, Base: 160}}
}

// feed sets ia's fundamental to loadA and its TDD to tdd in record k of
// recs and evaluates it.
func feed(e *Evaluator, r *metrics.Record, loadA, tdd float64) []Transition {
	r.Channels[chIA].H[0].RMS = loadA
	r.Channels[chIA].TDDH50Pct = tdd
	return e.Evaluate(r, nil)
}

// TestBaselineRelative: the rule learns 31 % at 80-90 % load over its
// first hour (bins by fundamental current: 136 A of IL 160 A = 85 %),
// stays quiet at 33 % (2 points above), raises at 37 % after its 20 min
// delay with the threshold it crossed, 31 + 5 = 36 %, holds at another
// load that has no baseline, and clears below 31 + 5 − 1 = 35 %. Hand
// computed from the rule's definition (README "Alarm rules").
func TestBaselineRelative(t *testing.T) {
	t.Parallel()
	s := northWeir(t)
	e, err := New([]Rule{ageingRule()}, s, nil)
	if err != nil {
		t.Fatal(err)
	}
	recs := series(s, metrics.Int10min, 600, 30, 136)
	k := 0
	step := func(load, tdd float64) []Transition {
		tr := feed(e, recs[k], load, tdd)
		k++
		return tr
	}
	for range 6 { // 6 × 10 min: the learning hour
		if tr := step(136, 31); len(tr) != 0 {
			t.Fatalf("transition while learning: %+v", tr)
		}
	}
	if l := e.States()["reactor-ageing-ia"].Learned; l.Bins[8].N != 6 || l.Bins[8].Mean != 31 || !l.From.Equal(t0) {
		t.Fatalf("learned %+v; want 6 values of 31 in bin 8 (80-90 %% load) from %v", l, t0)
	}
	for range 4 {
		if tr := step(136, 33); len(tr) != 0 {
			t.Fatalf("2 points above the baseline raised: %+v", tr)
		}
	}
	if tr := step(136, 37); len(tr) != 0 {
		t.Fatalf("raised before the delay: %+v", tr)
	}
	tr := step(136, 37)
	if len(tr) != 1 || !tr[0].Raised || tr[0].Threshold != 36 || tr[0].Value != 37 {
		t.Fatalf("transitions %+v; want raised at 37 with threshold 36", tr)
	}
	// at 40 % load (64 A, bin 4) nothing was learned: held, even at 50 %
	for range 3 {
		if tr := step(64, 50); len(tr) != 0 {
			t.Fatalf("a bin without baseline made a transition: %+v", tr)
		}
	}
	// 35.5 is inside the deadband: held; 34.5 clears after the delay
	if tr := step(136, 35.5); len(tr) != 0 {
		t.Fatalf("cleared inside the deadband: %+v", tr)
	}
	step(136, 34.5)
	if tr := step(136, 34.5); len(tr) != 1 || tr[0].Raised {
		t.Fatalf("transitions %+v; want cleared below 35", tr)
	}

	// the baseline survives a restart through the JSON-serialisable state
	b, err := json.Marshal(e.States())
	if err != nil {
		t.Fatal(err)
	}
	var restored map[string]State
	if err := json.Unmarshal(b, &restored); err != nil {
		t.Fatal(err)
	}
	e2, err := New([]Rule{ageingRule()}, s, restored)
	if err != nil {
		t.Fatal(err)
	}
	r := recs[k]
	feed(e2, r, 136, 40)
	if l := e2.States()["reactor-ageing-ia"].Learned; !l.Done || l.Bins[8].N != 6 {
		t.Errorf("restored baseline %+v learned more after its period", l)
	}
}

// TestBaselineRuleErrors: a baseline needs a positive period and load base.
func TestBaselineRuleErrors(t *testing.T) {
	t.Parallel()
	s := northWeir(t)
	for _, b := range []Baseline{{Learn: 0, Base: 160}, {Learn: time.Hour, Base: 0}} {
		r := ageingRule()
		r.Baseline = &b
		if _, err := New([]Rule{r}, s, nil); err == nil {
			t.Errorf("baseline %+v accepted", b)
		}
	}
}
