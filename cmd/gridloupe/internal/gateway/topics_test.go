package gateway

import (
	"context"
	"encoding/json"
	"errors"
	"fmt"
	"os"
	"path/filepath"
	"regexp"
	"slices"
	"strconv"
	"strings"
	"testing"

	"github.com/gridloupe/gridloupe/metrics"
	"github.com/gridloupe/gridloupe/metrics/alarm"
)

// readmeTopic is one row of the README's "MQTT topics and payloads" table.
type readmeTopic struct {
	pattern *regexp.Regexp // the topic under the test's base
	qos     byte
	example map[string]json.RawMessage // the payload example, when it is one JSON object
	raw     string
}

// readmeTopics parses the README table: `…/name` in the first column,
// "QoS[, retained]" in the second, an example payload in the third.
func readmeTopics(t *testing.T, base string) []readmeTopic {
	t.Helper()
	b, err := os.ReadFile(filepath.Join("..", "..", "..", "..", "README.md"))
	if err != nil {
		t.Fatal(err)
	}
	text := string(b)
	i := strings.Index(text, "### MQTT topics and payloads")
	if i < 0 {
		t.Fatal(`README has no "### MQTT topics and payloads" section`)
	}
	row := regexp.MustCompile("(?m)^\\| `…(/[^`]+)` \\| (\\d)[^|]*\\| `(\\{[^`]*\\})`")
	var out []readmeTopic
	for _, m := range row.FindAllStringSubmatch(text[i:], -1) {
		pat := regexp.QuoteMeta(base + m[1])
		pat = strings.ReplaceAll(pat, "<interval>", "("+strings.Join(metrics.IntervalLabels(), "|")+")")
		qos, _ := strconv.Atoi(m[2])
		rt := readmeTopic{pattern: regexp.MustCompile("^" + pat + "$"), qos: byte(qos), raw: m[1]}
		var ex map[string]json.RawMessage
		if json.Unmarshal([]byte(m[3]), &ex) == nil {
			rt.example = ex
		}
		out = append(out, rt)
	}
	if len(out) < 4 {
		t.Fatalf("README topic table: %d rows parsed, want status, telemetry, alarm, health", len(out))
	}
	return out
}

// TestTopicsAsDocumented: every message the gateway queues goes to a topic
// of the README's table with the QoS given there, and carries the keys of
// the README's example payload; every documented topic but status (the
// publisher's own, checked in stream/mqtt) is used.
func TestTopicsAsDocumented(t *testing.T) {
	const base = "gridloupe/test-site/gw1"
	doc := readmeTopics(t, base)
	r := newRig(t, filepath.Join(t.TempDir(), "g.db"), 610)
	ev, err := alarm.New([]alarm.Rule{thdRule()}, r.setup, nil)
	if err != nil {
		t.Fatal(err)
	}
	g := r.gateway(t, ev, nil, nil)
	if err := g.Run(context.Background()); !errors.Is(err, ErrSourceEnded) {
		t.Fatalf("Run: %v", err)
	}
	msgs, err := r.db.Pending(0, 10000)
	if err != nil {
		t.Fatal(err)
	}
	used := make([]bool, len(doc))
	reported := map[string]bool{} // each problem once, not once per message
	errorf := func(format string, args ...any) {
		if msg := fmt.Sprintf(format, args...); !reported[msg] {
			reported[msg] = true
			t.Error(msg)
		}
	}
	for _, m := range msgs {
		k := slices.IndexFunc(doc, func(d readmeTopic) bool { return d.pattern.MatchString(m.Topic) })
		if k < 0 {
			errorf("queued on %q: no such topic in the README table", m.Topic)
			continue
		}
		used[k] = true
		d := doc[k]
		if m.QoS != d.qos {
			errorf("%s: QoS %d, README says %d", m.Topic, m.QoS, d.qos)
		}
		if d.example == nil {
			continue
		}
		var p map[string]json.RawMessage
		if err := json.Unmarshal(m.Payload, &p); err != nil {
			t.Fatalf("%s: payload not a JSON object: %v", m.Topic, err)
		}
		for key := range d.example {
			if _, ok := p[key]; !ok && key != "seq" { // seq is put first when the message is sent (README)
				errorf("%s: payload lacks %q of the README example", m.Topic, key)
			}
		}
		for key := range p {
			if _, ok := d.example[key]; !ok {
				errorf("%s: payload key %q is not in the README example", m.Topic, key)
			}
		}
	}
	for k, d := range doc {
		if !used[k] && d.raw != "/status" {
			t.Errorf("README topic …%s: nothing queued on it", d.raw)
		}
	}
}
