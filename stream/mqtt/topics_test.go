package mqtt_test

import (
	"bytes"
	"encoding/json"
	"math"
	"os"
	"path/filepath"
	"strconv"
	"strings"
	"testing"

	"github.com/gridloupe/gridloupe/stream/mqtt"
	"github.com/gridloupe/gridloupe/stream/mqtt/topic"
	"github.com/gridloupe/gridloupe/stream/summary"
)

func TestTopics(t *testing.T) {
	t.Parallel()
	const base = "gridloupe/north-weir-dc2/dc2-gw1"
	tests := []struct{ name, got, want, src string }{
		{"status", topic.Status(base), base + "/status", "DESIGN.md, Daemon keys, MQTT and store: topic layout"},
		{"telemetry", topic.Telemetry(base, "10min"), base + "/telemetry/10min", "DESIGN.md: .../telemetry/<interval>"},
		{"alarm", topic.Alarm(base), base + "/alarm", "DESIGN.md: .../alarm"},
		{"health", topic.Health(base), base + "/health", "README, MQTT topics and payloads: …/health"},
		{"event", topic.Event(base), base + "/event", "DESIGN.md: .../event"},
	}
	for _, tc := range tests {
		if tc.got != tc.want {
			t.Errorf("%s: got %q, want %q (%s)", tc.name, tc.got, tc.want, tc.src)
		}
	}
}

func TestWithSeq(t *testing.T) {
	t.Parallel()
	tests := []struct {
		name, in string
		seq      uint64
		want     string
		src      string
	}{
		{"object", `{"a":1}`, 12, `{"seq":12,"a":1}`, "README, MQTT topics and payloads: seq inserted as the first key"},
		{"empty object", `{}`, 3, `{"seq":3}`, "RFC 8259 §4: an object with one member has no comma"},
		{"empty object with space", "{ \n}", 3, "{\"seq\":3 \n}", "RFC 8259 §2: whitespace around structural characters is insignificant"},
		{"leading and trailing space", " \t{\"a\":\"b\"}\n", 7, " \t{\"seq\":7,\"a\":\"b\"}\n", "RFC 8259 §2: insignificant whitespace kept as is"},
		{"nested", `{"a":{"b":[1,2]}}`, 1, `{"seq":1,"a":{"b":[1,2]}}`, "README, MQTT topics and payloads: only the outer object gets seq"},
		{"largest seq", `{"x":0}`, ^uint64(0), `{"seq":18446744073709551615,"x":0}`, "uint64 maximum, 2^64-1"},
		{"zero seq", `{"x":0}`, 0, `{"seq":0,"x":0}`, "common practice, no source: 0 is printed, not omitted"},
		{"already first", `{"seq":5,"a":1}`, 9, `{"seq":5,"a":1}`, "doc of WithSeq: a payload whose first key is seq is left unchanged"},
		{"already first spaced", `{ "seq" : 5}`, 9, `{ "seq" : 5}`, "doc of WithSeq, RFC 8259 §2 whitespace"},
		{"seq-like key", `{"seqs":[1]}`, 2, `{"seq":2,"seqs":[1]}`, "doc of WithSeq: only the key seq itself counts"},
		{"array", `[1,2]`, 4, `[1,2]`, "README, MQTT topics and payloads: payloads that are not objects stay unchanged"},
		{"string", `"{x}"`, 4, `"{x}"`, "README, MQTT topics and payloads: not an object"},
		{"number", `42`, 4, `42`, "README, MQTT topics and payloads: not an object"},
		{"empty", ``, 4, ``, "README, MQTT topics and payloads: not an object"},
		{"lone brace", `{`, 4, `{`, "doc of WithSeq: needs a closing brace"},
		{"binary", "\x00\x01{}", 4, "\x00\x01{}", "README, MQTT topics and payloads: not an object (first byte not '{')"},
		{"text", `online`, 4, `online`, "README, MQTT topics and payloads: not an object"},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			t.Parallel()
			in := []byte(tc.in)
			got := mqtt.WithSeq(in, tc.seq)
			if string(got) != tc.want {
				t.Errorf("WithSeq(%q, %d) = %q, want %q (%s)", tc.in, tc.seq, got, tc.want, tc.src)
			}
			if string(in) != tc.in {
				t.Errorf("input modified: %q", in)
			}
		})
	}
}

// FuzzWithSeq checks, for any input, that a JSON object comes out as a JSON
// object whose first key is seq and whose other members are unchanged, and
// that anything else comes out unchanged.
func FuzzWithSeq(f *testing.F) {
	for _, s := range []string{`{}`, `{"a":1}`, ` {"b":[1,{"c":null}]} `, `[1]`, `"x"`, `{`, `}`, `{"seq":1}`, ``, "{\"a\":\"\\u00e9\"}"} {
		f.Add([]byte(s), uint64(17))
	}
	f.Fuzz(func(t *testing.T, in []byte, seq uint64) {
		orig := bytes.Clone(in)
		out := mqtt.WithSeq(in, seq)
		if !bytes.Equal(in, orig) {
			t.Fatalf("input modified")
		}
		var obj map[string]json.RawMessage
		if json.Unmarshal(in, &obj) != nil {
			return // not a JSON object: WithSeq may pass it through or prefix it; nothing to check
		}
		if _, had := obj["seq"]; had {
			return // first or later key already seq: documented as the caller's business
		}
		var got map[string]json.RawMessage
		if err := json.Unmarshal(out, &got); err != nil {
			t.Fatalf("WithSeq(%q) = %q: not JSON: %v", in, out, err)
		}
		if string(got["seq"]) != strconv.FormatUint(seq, 10) {
			t.Fatalf("seq = %s, want %d", got["seq"], seq)
		}
		if first := firstKey(t, out); first != "seq" {
			t.Fatalf("first key %q, want seq", first)
		}
		delete(got, "seq")
		if len(got) != len(obj) {
			t.Fatalf("%d members after, %d before", len(got), len(obj))
		}
		for k, v := range obj {
			if !bytes.Equal(got[k], v) {
				t.Fatalf("member %q changed: %s -> %s", k, v, got[k])
			}
		}
	})
}

func firstKey(t testing.TB, b []byte) string {
	t.Helper()
	d := json.NewDecoder(bytes.NewReader(b))
	if tok, err := d.Token(); err != nil || tok != json.Delim('{') {
		t.Fatalf("%q: not an object: %v", b, err)
	}
	tok, err := d.Token()
	if err != nil {
		t.Fatalf("%q: %v", b, err)
	}
	k, _ := tok.(string)
	return k
}

// TestStatusTopicAsDocumented: the status topic the publisher uses is the
// README's, with QoS 1 and retained.
func TestStatusTopicAsDocumented(t *testing.T) {
	t.Parallel()
	b, err := os.ReadFile(filepath.Join("..", "..", "README.md"))
	if err != nil {
		t.Fatal(err)
	}
	const base = "gridloupe/north-weir-dc2/dc2-gw1"
	suffix := strings.TrimPrefix(topic.Status(base), base)
	// src: README, MQTT topics and payloads, the table's status row
	if row := "| `…" + suffix + "` | 1, retained |"; !strings.Contains(string(b), row) {
		t.Errorf("README has no row %q for the status topic %q", row, topic.Status(base))
	}
}

// TestWithSeqWithinSummaryBound: "seq" adds exactly summary.SeqBytes to a
// summary at the largest sequence number, so summary.Widest, which the
// gateway checks against summary.MaxBytes, bounds what is published
// (closed form: len(`"seq":`) 6 + 20 digits of 2^64−1 + a comma = 28).
func TestWithSeqWithinSummaryBound(t *testing.T) {
	p := []byte(`{"site":"north-weir-dc2"}`)
	if n := len(mqtt.WithSeq(p, math.MaxUint64)) - len(p); n != summary.SeqBytes {
		t.Errorf(`"seq" adds %d bytes at the largest seq, summary.SeqBytes is %d`, n, summary.SeqBytes)
	}
}
