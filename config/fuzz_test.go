package config

import (
	"errors"
	"os"
	"path/filepath"
	"slices"
	"strings"
	"testing"
)

// FuzzParse checks that Parse never panics, that every error is an *Error,
// and that every accepted config keeps the invariants other packages rely on.
func FuzzParse(f *testing.F) {
	files, _ := filepath.Glob(filepath.Join("testdata", "*.yaml"))
	for _, p := range files {
		if b, err := os.ReadFile(p); err == nil {
			f.Add(b)
		}
	}
	for _, tc := range badCases {
		f.Add([]byte(tc.doc))
	}
	f.Add([]byte(Defaults() + "channels: [{name: va, kind: voltage, phase: a}]\n"))
	f.Add([]byte("a: &a [*a, *a]\nnominal: *a\n"))
	f.Fuzz(func(t *testing.T, data []byte) {
		c, err := Parse("f.yaml", data)
		if err != nil {
			var e *Error
			if !errors.As(err, &e) || e.File != "f.yaml" || e.Line < 0 || e.Msg == "" {
				t.Fatalf("error %T %q is not a located *Error", err, err)
			}
			return
		}
		checkInvariants(t, c)
	})
}

func checkInvariants(t *testing.T, c *Config) {
	t.Helper()
	o := c.Harmonics.Orders
	if len(o) == 0 || o[0] != 1 || !slices.IsSorted(o) || o[len(o)-1] > 50 || (c.Harmonics.All && len(o) != 50) {
		t.Fatalf("orders %v (all=%v)", o, c.Harmonics.All)
	}
	for i := 1; i < len(o); i++ {
		if o[i] == o[i-1] {
			t.Fatalf("order %d twice", o[i])
		}
	}
	if c.Nominal.FrequencyHz != 50 && c.Nominal.FrequencyHz != 60 || !(c.Nominal.VoltageV > 0) {
		t.Fatalf("nominal %+v", c.Nominal)
	}
	if r := c.ChannelIndex(c.Reference); r < 0 || c.Channels[r].Kind != KindVoltage {
		t.Fatalf("reference %q", c.Reference)
	}
	for _, ch := range c.Channels {
		if ch.Scale == 0 || ch.Level == "" || strings.ContainsAny(ch.Level, "+#/") || strings.HasPrefix(ch.Level, "$") {
			t.Fatalf("channel %+v", ch)
		}
	}
	for _, a := range c.Alarms {
		if a.Metric == MetricEvent {
			ci := c.ChannelIndex(a.Channel)
			if a.Above != nil || a.Below != nil || a.Level != "" || a.Severity == "" || a.Deadband != 0 || a.Harmonic != 0 ||
				a.MinLoadPct != 0 || a.RelativeTo != "" || (a.Channel != "" && (ci < 0 || c.Channels[ci].Kind != KindVoltage)) {
				t.Fatalf("event alarm %+v", a)
			}
			for _, k := range a.Kinds {
				if !slices.Contains(EventKinds, k) {
					t.Fatalf("event alarm kind %q", k)
				}
			}
			continue
		}
		if (a.Above == nil) == (a.Below == nil) || a.Level == "" || a.Severity == "" || len(a.Kinds) > 0 {
			t.Fatalf("alarm %+v", a)
		}
	}
	if c.MQTT.Base == "" || c.MQTT.ClientID == "" || c.Gateway == "" || c.Store.CommitEvery <= 0 {
		t.Fatalf("mqtt/store %+v %+v", c.MQTT, c.Store)
	}
}

func BenchmarkParse(b *testing.B) {
	data, err := os.ReadFile(filepath.Join("testdata", "full.yaml"))
	if err != nil {
		b.Fatal(err)
	}
	b.SetBytes(int64(len(data)))
	b.ReportAllocs()
	var c *Config
	for b.Loop() {
		if c, err = Parse("full.yaml", data); err != nil {
			b.Fatal(err)
		}
	}
	if len(c.Channels) != 7 {
		b.Fatalf("%d channels", len(c.Channels))
	}
}
