package mqtt_test

import (
	"testing"

	"github.com/gridloupe/gridloupe/stream/mqtt"
)

func BenchmarkWithSeq(b *testing.B) {
	payload := []byte(`{"interval":"10min","start":"2026-03-01T10:00:00.000000Z","duration_s":600,"freq_hz":50.01,"flags":[]}`)
	b.SetBytes(int64(len(payload)))
	b.ReportAllocs()
	var out []byte
	seq := uint64(1)
	for b.Loop() {
		out = mqtt.WithSeq(payload, seq)
		seq++
	}
	if len(out) <= len(payload) {
		b.Fatalf("no seq inserted: %q", out)
	}
}
