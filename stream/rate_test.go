package stream

import (
	"bytes"
	"log/slog"
	"strings"
	"testing"

	"github.com/gridloupe/gridloupe/metrics"
)

// TestRateWarningMatchesConfig: the pipeline warns about a low sample rate
// by the same rule config validation applies (the highest order at 115 %
// of nominal below half the rate; README "replay" and config --defaults),
// so 6400 Hz with orders to 50 at 50 Hz (needs more than 5750 Hz) runs
// without a warning and 5700 Hz warns.
func TestRateWarningMatchesConfig(t *testing.T) {
	s := setupOf(t, metrics.SinglePhase, 230, 0, true, nil,
		metrics.Channel{Name: "v", Kind: metrics.Voltage, Phase: 'a'})
	for _, c := range []struct {
		fs   float64 // Hz
		warn bool    // src: 2·50·1.15·50 Hz = 5750 Hz, the config rule (README "Set up" config keys)
	}{{6400, false}, {5760, false}, {5700, true}} {
		var log bytes.Buffer
		_, err := New(Config{Setup: s, SampleRate: c.fs, NominalHz: 50, Logger: slog.New(slog.NewTextHandler(&log, nil))})
		if err != nil {
			t.Fatal(err)
		}
		if got := strings.Contains(log.String(), "sample rate too low"); got != c.warn {
			t.Errorf("%g Hz: warning %v, want %v (log %q)", c.fs, got, c.warn, log.String())
		}
	}
}
