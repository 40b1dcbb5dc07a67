package topic

import (
	"os"
	"path/filepath"
	"strings"
	"testing"
)

// TestLayoutAsDocumented: every topic of the layout is a row of the
// README's "MQTT topics and payloads" table (src: that table), except the
// event topic, which is reserved for the voltage-event messages.
func TestLayoutAsDocumented(t *testing.T) {
	b, err := os.ReadFile(filepath.Join("..", "..", "..", "README.md"))
	if err != nil {
		t.Fatal(err)
	}
	readme := string(b)
	const base = "gridloupe/north-weir-dc2/dc2-gw1"
	for _, c := range []struct{ name, got, row string }{
		{"status", Status(base), "| `…/status` |"},
		{"telemetry", Telemetry(base, "<interval>"), "| `…/telemetry/<interval>` |"},
		{"summary", Summary(base, "<interval>"), "| `…/summary/<interval>` |"},
		{"energy", Energy(base), "| `…/energy` |"},
		{"diagnostics", Diagnostics(base), "| `…/diagnostics` |"},
		{"alarm", Alarm(base), "| `…/alarm` |"},
		{"health", Health(base), "| `…/health` |"},
	} {
		if !strings.Contains(readme, c.row) {
			t.Errorf("README has no row %q", c.row)
		}
		if want := base + strings.TrimPrefix(strings.Split(c.row, "`")[1], "…"); c.got != want {
			t.Errorf("%s: %q, the README row gives %q", c.name, c.got, want)
		}
	}
	if got := Event(base); got != base+"/event" {
		t.Errorf("event: %q, want %q (DESIGN \"Daemon keys, MQTT and store\")", got, base+"/event")
	}
}
