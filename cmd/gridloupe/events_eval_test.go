package main

import (
	"strings"
	"testing"
	"time"

	"github.com/gridloupe/gridloupe/metrics"
)

// TestEvaluateExcludesEventFlag: a week of 10 min values in which every
// tenth one has voltage h5 at 20 % (four times the IEEE 519 Table 1 limit
// of 5 % at ≤ 1 kV). Unflagged, the weekly 95th percentile fails; flagged
// event, the same values are excluded and counted (IEC 61000-4-30 flagging
// concept, REFERENCE 2.5, from memory) and the week passes.
func TestEvaluateExcludesEventFlag(t *testing.T) {
	t.Parallel()
	for _, tc := range []struct {
		name    string
		flags   metrics.Flags
		verdict string
		events  string
	}{
		{"unflagged", 0, "FAIL", `"event":0`},
		{"flagged event", metrics.FlagEvent, "PASS", `"event":51`},
	} {
		t.Run(tc.name, func(t *testing.T) {
			t.Parallel()
			cfgPath, dbPath, setup, db := newEvalStore(t, evalCfgFew)
			var recs []*metrics.Record
			for i := range 7 * 144 {
				r := metrics.NewRecord(setup)
				h5 := 3.0
				if i%20 == 0 {
					h5 = 20
				}
				fillEvalRecord(setup, r, metrics.Int10min, evalWeek.Add(time.Duration(i)*10*time.Minute), h5)
				if i%20 == 0 {
					r.Flags = tc.flags
				}
				recs = append(recs, r)
			}
			if err := db.PutAggregates(recs); err != nil {
				t.Fatal(err)
			}
			if err := db.Close(); err != nil {
				t.Fatal(err)
			}
			res := runCmd("evaluate", "--config", cfgPath, "--store", dbPath, "--from", "2026-03-02T00:00:00Z", "--format", "jsonl")
			if !strings.Contains(res.stdout, `"week_10min"`) || !strings.Contains(res.stdout, tc.events) {
				t.Fatalf("exit %d; want the week_10min line with %s:\n%s\n%s", res.code, tc.events, res.stdout, res.stderr)
			}
			text := runCmd("evaluate", "--config", cfgPath, "--store", dbPath, "--from", "2026-03-02T00:00:00Z")
			if !strings.Contains(text.stdout, "week 10min") || !strings.Contains(text.stdout, "h5") {
				t.Fatalf("no weekly h5 line:\n%s", text.stdout)
			}
			wk := ""
			for _, l := range strings.Split(text.stdout, "\n") {
				if strings.Contains(l, "va") && strings.Contains(l, "h5") && strings.Contains(l, "weekly") {
					wk = l
				}
			}
			if want := strings.ToLower(tc.verdict); !strings.Contains(wk, want) {
				t.Fatalf("weekly va h5 line %q, want %s:\n%s", wk, want, text.stdout)
			}
		})
	}
}
