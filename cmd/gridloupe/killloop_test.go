//go:build killloop

package main

import (
	"encoding/json"
	"math/rand/v2"
	"os"
	"os/exec"
	"path/filepath"
	"strings"
	"syscall"
	"testing"
	"time"

	"github.com/gridloupe/gridloupe/metrics"
	"github.com/gridloupe/gridloupe/store"
	"github.com/gridloupe/gridloupe/stream/mqtt/mqtttest"
)

// TestSIGKILLLoop is the reliability run of bench/sigkill-loop.sh (not CI:
// build tag killloop): the gateway with 3 s telemetry over a real
// mosquitto is SIGKILLed 20 times at random moments; after every kill the
// store must pass the store's check (its own page walk and bbolt's
// consistency check); a last run ends with SIGTERM so the outbox drains.
// Then every stored 3 s record's telemetry must be delivered, still queued
// or counted as dropped; it prints the figures the README quotes.
func TestSIGKILLLoop(t *testing.T) {
	const kills = 20
	_, sub, dir, cfg := telemetryRig(t)
	path := filepath.Join(dir, "gl.db")
	rng := rand.New(rand.NewPCG(20, 26))
	for i := range kills {
		p := startDaemon(t, "run", "--config", cfg, "--log-level", "error")
		time.Sleep(time.Duration(1500+rng.IntN(4500)) * time.Millisecond)
		if err := p.cmd.Process.Signal(syscall.SIGKILL); err != nil {
			t.Fatal(err)
		}
		p.wait(t, 10*time.Second)
		db, err := store.Open(store.Options{Path: path, ReadOnly: true})
		if err != nil {
			t.Fatalf("kill %d: %v", i+1, err)
		}
		if err := db.Check(); err != nil {
			t.Fatalf("kill %d: %v", i+1, err)
		}
		st := db.Stats()
		t.Logf("kill %2d: check ok, %d records of 3 s, %d telemetry queued", i+1, st.Records[metrics.Int3s], st.Outbox[store.ClassTelemetry])
		_ = db.Close()
	}
	p := startDaemon(t, "run", "--config", cfg, "--log-level", "error")
	time.Sleep(15 * time.Second)
	if err := p.cmd.Process.Signal(syscall.SIGTERM); err != nil {
		t.Fatal(err)
	}
	if code, _ := p.wait(t, 30*time.Second); code != 0 {
		t.Fatalf("last run: exit %d: %s", code, p.stderr)
	}
	time.Sleep(2 * time.Second) // the last deliveries reach the subscriber

	db, err := store.Open(store.Options{Path: path, ReadOnly: true})
	if err != nil {
		t.Fatal(err)
	}
	defer db.Close()
	if err := db.Check(); err != nil {
		t.Fatal(err)
	}
	stored, delivered, copies, queued, dropped, missing := account(t, db, sub)
	t.Logf("%d SIGKILLs: %d stores checked, all passed; %d records of 3 s stored; %d delivered (%d copies, %d duplicates from QoS 1 resends); %d still queued; %d counted as dropped; %d neither delivered, queued nor counted",
		kills, kills+1, stored, delivered, copies, copies-delivered, queued, dropped, missing)
	if uint64(missing) > dropped {
		t.Errorf("%d stored records' telemetry lost without being counted (%d counted)", missing, dropped)
	}
}

// account compares the stored 3 s records with the telemetry delivered to
// sub, still queued and counted as dropped.
func account(t *testing.T, db *store.DB, sub *mqtttest.Subscriber) (stored, delivered, copies, queued int, dropped uint64, missing int) {
	t.Helper()
	st := map[string]bool{}
	if err := db.Query(metrics.Int3s, time.Time{}, time.Time{}, func(r *metrics.Record) error {
		st[r.Start.UTC().Format("2006-01-02T15:04:05.000000Z")] = true
		return nil
	}); err != nil {
		t.Fatal(err)
	}
	q := map[string]bool{}
	pending, err := db.Pending(0, 1<<20)
	if err != nil {
		t.Fatal(err)
	}
	for _, m := range pending {
		var v struct{ Start string }
		if json.Unmarshal(m.Payload, &v) == nil && m.Class == store.ClassTelemetry {
			q[v.Start] = true
		}
	}
	d := map[string]bool{}
	for _, m := range sub.Received() {
		var v struct{ Start string }
		if json.Unmarshal(m.Payload, &v) != nil || v.Start == "" {
			continue
		}
		copies++
		d[v.Start] = true
	}
	for s := range st {
		if !d[s] && !q[s] {
			missing++
		}
	}
	return len(st), len(d), copies, len(q), db.Losses()[store.ClassTelemetry], missing
}

// TestBrokerOutageLoop: the broker is stopped for 8 s six times while the
// gateway runs with 3 s telemetry at QoS 1; after a clean stop every stored
// record's telemetry is delivered, queued or counted.
func TestBrokerOutageLoop(t *testing.T) {
	const outages = 6
	mosq, sub, dir, cfg := telemetryRig(t)
	p := startDaemon(t, "run", "--config", cfg, "--log-level", "error")
	for range outages {
		time.Sleep(4 * time.Second)
		mosq.Stop()
		time.Sleep(8 * time.Second)
		mosq.Start()
	}
	time.Sleep(60 * time.Second) // reconnect (backoff up to 45 s) and drain
	if err := p.cmd.Process.Signal(syscall.SIGTERM); err != nil {
		t.Fatal(err)
	}
	if code, _ := p.wait(t, 30*time.Second); code != 0 {
		t.Fatalf("exit %d: %s", code, p.stderr)
	}
	time.Sleep(2 * time.Second)
	db, err := store.Open(store.Options{Path: filepath.Join(dir, "gl.db"), ReadOnly: true})
	if err != nil {
		t.Fatal(err)
	}
	defer db.Close()
	stored, delivered, copies, queued, dropped, missing := account(t, db, sub)
	t.Logf("%d broker outages of 8 s: %d records of 3 s stored; %d delivered (%d copies); %d still queued; %d counted as dropped; %d neither delivered, queued nor counted",
		outages, stored, delivered, copies, queued, dropped, missing)
	if uint64(missing) > dropped {
		t.Errorf("%d stored records' telemetry lost without being counted", missing)
	}
}

// TestDiskFull runs the gateway on a 2 MB tmpfs (needs root: mount) with
// the broker up: once the card is full every failed batch is counted in
// records_lost, the health message still arrives with one "store: " in
// store_error, and the retained status changes at most once a minute.
func TestDiskFull(t *testing.T) {
	dir := t.TempDir()
	mnt := filepath.Join(dir, "card")
	if err := os.Mkdir(mnt, 0o755); err != nil {
		t.Fatal(err)
	}
	if out, err := exec.Command("mount", "-t", "tmpfs", "-o", "size=2m", "tmpfs", mnt).CombinedOutput(); err != nil {
		t.Skipf("cannot mount a small tmpfs: %v %s", err, out)
	}
	t.Cleanup(func() { _ = exec.Command("umount", mnt).Run() })
	mosq := mqtttest.Start(t)
	base := "gridloupe/test-bench/gw-test"
	sub := mqtttest.Subscribe(t, mosq.URL(), base+"/#")
	cfgText := strings.Replace(readFile(t, daemonConfig(t, dir, mosq.URL())), filepath.Join(dir, "gl.db"), filepath.Join(mnt, "gl.db"), 1)
	cfgText = strings.Replace(cfgText, "speed: 60", "speed: 600", 1)
	cfg := writeFile(t, dir, "full.yaml", cfgText)
	p := startDaemon(t, "run", "--config", cfg, "--log-level", "error")
	time.Sleep(90 * time.Second)
	if err := p.cmd.Process.Signal(syscall.SIGTERM); err != nil {
		t.Fatal(err)
	}
	p.wait(t, 30*time.Second)
	time.Sleep(2 * time.Second)
	var health []payload
	statuses := 0
	for _, m := range sub.Received() {
		switch m.Topic {
		case base + "/health":
			health = append(health, decode(t, m))
		case base + "/status":
			statuses++
		}
	}
	if len(health) == 0 {
		t.Fatal("no health message")
	}
	last := health[len(health)-1]
	se, _ := last["store_error"].(string)
	lost, _ := last["records_lost"].(map[string]any)
	dropped, _ := last["outbox_dropped"].(map[string]any)
	t.Logf("2 MB card, 90 s at 600x: %d health messages, last store_error %q, records_lost %v, outbox_dropped %v; %d status messages",
		len(health), se, lost, dropped, statuses)
	if strings.Count(se, "store: ") != 1 {
		t.Errorf("store_error %q: want one \"store: \"", se)
	}
	if n, _ := lost["3s"].(float64); n == 0 {
		t.Errorf("records_lost %v: want the failed batches counted", lost)
	}
	if statuses > 1+2+2 { // connect, at most one change a minute over 90 s, the offline, slack
		t.Errorf("%d status messages in 90 s: not debounced", statuses)
	}
}

// telemetryRig starts a mosquitto, a subscriber to the test cabinet's 3 s
// telemetry and writes the daemon config (3 s telemetry, 60x real time).
func telemetryRig(t *testing.T) (mosq *mqtttest.Broker, sub *mqtttest.Subscriber, dir, cfg string) {
	t.Helper()
	mosq = mqtttest.Start(t)
	sub = mqtttest.Subscribe(t, mosq.URL(), "gridloupe/test-bench/gw-test/telemetry/3s")
	dir = t.TempDir()
	return mosq, sub, dir, daemonConfig(t, dir, mosq.URL())
}
