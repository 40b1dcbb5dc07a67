package gateway

import (
	"context"
	"encoding/json"
	"path/filepath"
	"strings"
	"sync"
	"testing"
	"time"

	"github.com/gridloupe/gridloupe/metrics"
	"github.com/gridloupe/gridloupe/stream"
)

// TestHealthWhenStoreFails: once the store stops taking writes (here it is
// closed under the gateway, as a full card fails every write), the health
// message still goes out directly, says "store: " once in store_error, and
// counts the records of every failed batch in records_lost (README, Bad
// conditions).
func TestHealthWhenStoreFails(t *testing.T) {
	r := newRig(t, filepath.Join(t.TempDir(), "g.db"), 1300)
	var mu sync.Mutex
	var health []map[string]any
	var closed sync.Once
	g, err := New(Config{
		Pipeline: stream.Config{Setup: r.setup, SampleRate: 6400, NominalHz: 50, Base: t0},
		Source:   r.src, Store: r.db, Telemetry: []metrics.Interval{metrics.Int3s},
		Base: "gridloupe/test-site/gw1", Site: "test-site", Gateway: "gw1", CommitEvery: 20 * time.Millisecond,
		OnRecord: func(rec *metrics.Record, _ []string) {
			if rec.Interval == metrics.Int10min {
				closed.Do(func() { _ = r.db.Close() })
			}
		},
		PublishHealth: func(topic string, payload []byte) {
			var p map[string]any
			if err := json.Unmarshal(payload, &p); err != nil {
				t.Errorf("%s: %v", topic, err)
			}
			mu.Lock()
			health = append(health, p)
			mu.Unlock()
		}})
	if err != nil {
		t.Fatal(err)
	}
	_ = g.Run(context.Background())
	mu.Lock()
	defer mu.Unlock()
	if len(health) < 2 {
		t.Fatalf("%d health messages for 1300 s, want 2 (one per 10 min value)", len(health))
	}
	last := health[len(health)-1]
	se, _ := last["store_error"].(string)
	if !strings.HasPrefix(se, "store: ") || strings.Count(se, "store: ") != 1 {
		t.Errorf("store_error %q: want one leading \"store: \"", se)
	}
	lost, _ := last["records_lost"].(map[string]any)
	if n, _ := lost["3s"].(float64); n < 100 {
		t.Errorf("records_lost %v: want the 3 s records of the failed batches (about 230 for the 700 s after the close)", lost)
	}
	od, _ := last["outbox_dropped"].(map[string]any)
	if n, _ := od["telemetry"].(float64); n < 100 {
		t.Errorf("outbox_dropped %v: want the telemetry of the failed batches counted", od)
	}
}
