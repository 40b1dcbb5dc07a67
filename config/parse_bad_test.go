package config

import (
	"errors"
	"fmt"
	"strings"
	"testing"
)

// hdr1 is a minimal valid single-voltage document of three lines; cases
// append from line 4.
// hdrD: North Weir DC-2's incomer measured three-wire, 400 V line-to-line,
// voltages ab and cb (the two-wattmeter hook-up); currents follow.
const hdrD = "nominal: {frequency_hz: 50, voltage_v: 400}\nwiring: delta\n" +
	"channels:\n" +
	"  - {name: vab, kind: voltage, phase: ab}\n" +
	"  - {name: vcb, kind: voltage, phase: cb}\n"

// hdrC: one voltage and two currents on phase a (two circuits' CTs).
const hdrC = "nominal: {frequency_hz: 50, voltage_v: 230}\nwiring: single-phase\nchannels:\n" +
	"  - {name: va, kind: voltage, phase: a}\n" +
	"  - {name: ia, kind: current, phase: a}\n" +
	"  - {name: i2, kind: current, phase: a}\n"

// hdrW: a wye bus of thirteen lines with two circuits: m on ia, ib, ic and
// n on i2a, i2b only; cases append from line 14.
const hdrW = "nominal: {frequency_hz: 50, voltage_v: 230}\nchannels:\n" +
	"  - {name: va, kind: voltage, phase: a}\n  - {name: vb, kind: voltage, phase: b}\n  - {name: vc, kind: voltage, phase: c}\n" +
	"  - {name: ia, kind: current, phase: a}\n  - {name: ib, kind: current, phase: b}\n  - {name: ic, kind: current, phase: c}\n" +
	"  - {name: i2a, kind: current, phase: a}\n  - {name: i2b, kind: current, phase: b}\n" +
	"circuits:\n  - {name: m, currents: [ia, ib, ic]}\n  - {name: n, currents: [i2a, i2b]}\n"

const hdr1 = "nominal: {frequency_hz: 50, voltage_v: 230}\n" +
	"channels:\n" +
	"  - {name: va, kind: voltage, phase: a}\n"

// hdr3 is a valid three-phase document of nine lines; cases append from
// line 10.
const hdr3 = "nominal: {frequency_hz: 50, voltage_v: 230}\n" +
	"il_a: 160\n" +
	"channels:\n" +
	"  - {name: va, kind: voltage, phase: a}\n" +
	"  - {name: vb, kind: voltage, phase: b}\n" +
	"  - {name: vc, kind: voltage, phase: c}\n" +
	"  - {name: ia, kind: current, phase: a}\n" +
	"  - {name: ib, kind: current, phase: b}\n" +
	"  - {name: ic, kind: current, phase: c}\n"

// Sources of the rules the bad cases check.
const (
	srcBrief   = "DESIGN, Config (YAML): validation list (file:line:col, key path, what is allowed)"
	srcDesign  = "DESIGN.md, Interface contract / Config (YAML)"
	srcDaemon  = "DESIGN.md, Daemon keys, MQTT and store"
	srcSources = "DESIGN.md, Field contract / Sources"
	srcMeasure = "DESIGN.md, Conventions of measurement"
	srcEvRule  = "README, Alarm rules: metric: event takes name, kind, channel (a voltage channel), on_delay, off_delay, severity"
	srcRate    = "DESIGN.md, Performance notes: orders to 50 at up to 69 Hz need fs above 6.9 kHz; rule fs > 2·order·1.15·f"
	srcMQTT    = "MQTT 3.1.1 §4.7 (topic wildcards +, #; $-topics) and §1.5.3 (UTF-8, control characters)"
	srcUnbCirc = "README, Alarm rules: unbalance_current_pct with circuits names its circuit"
	srcSumCirc = "README, MQTT topics and payloads: mqtt.summary_circuits lists circuits by name"
	srcYAML    = "YAML 1.2 §6.1 (tabs are not indentation) / §9.2 (documents); go.yaml.in/yaml/v3 parser message"
)

// badCase is one document that must be rejected: its *Error must carry
// line (and col when nonzero), key, and a phrase of the message.
type badCase struct {
	name, doc string
	line, col int
	key       string
	phrase    string
	src       string
}

var badCases = []badCase{
	// YAML syntax and document shape.
	{name: "unclosed flow mapping", doc: "nominal: {frequency_hz: 50\nchannels: []\n", line: 1, phrase: "YAML syntax", src: srcYAML},
	{name: "tab indentation", doc: "nominal:\n\tfrequency_hz: 50\n", line: 2, phrase: "YAML syntax: found character that cannot start any token", src: srcYAML},
	{name: "empty document", doc: "", line: 1, phrase: "empty document", src: srcBrief},
	{name: "comment only", doc: "# nothing\n", line: 1, phrase: "empty document", src: srcBrief},
	{name: "two documents", doc: hdr1 + "---\nsite: x\n", line: 4, phrase: "a second YAML document", src: srcYAML},
	{name: "top level is a list", doc: "- a\n- b\n", line: 1, phrase: "must be a mapping with keys site, gateway, nominal", src: srcBrief},
	{name: "anchored unknown key", doc: "base: &b {frequency_hz: 50}\n", line: 1, key: "base", phrase: "unknown key", src: srcBrief},
	{name: "merge key used", doc: "nominal:\n  <<: {frequency_hz: 50}\n", line: 2, key: "nominal", phrase: "merge keys (<<) are not supported", src: srcBrief},
	{name: "complex key", doc: "? [a]\n: b\n", line: 1, phrase: "keys must be plain words", src: srcBrief},

	// Unknown keys, duplicates, wrong types.
	{name: "unknown top key", doc: hdr1 + "sites: x\n", line: 4, col: 1, key: "sites", phrase: `unknown key (did you mean "site"?); allowed here: site, gateway, nominal, wiring`, src: srcBrief},
	{name: "unknown channel key", doc: "nominal: {frequency_hz: 50, voltage_v: 230}\nchannels:\n  - {name: va, knd: voltage, phase: a}\n", line: 3, col: 16, key: "channels[0].knd", phrase: "allowed here: name, kind, phase, scale, offset, full_scale, delay_us", src: srcBrief},
	{name: "unknown retention level", doc: hdr1 + "store: {retention: {200ms: 1h}}\n", line: 4, key: "store.retention.200ms", phrase: "allowed here: 3s, 10min, 2h", src: srcDaemon},
	{name: "duplicate key", doc: hdr1 + "site: a\nsite: b\n", line: 5, col: 1, key: "site", phrase: "given twice (first at line 4)", src: srcBrief},
	{name: "number as text", doc: "nominal: {frequency_hz: \"50\", voltage_v: 230}\n", line: 1, col: 25, key: "nominal.frequency_hz", phrase: `must be a number, not "50"`, src: srcBrief},
	{name: "list for mapping", doc: "nominal: [50, 230]\n", line: 1, col: 10, key: "nominal", phrase: "must be a mapping with keys frequency_hz, voltage_v, current_a", src: srcBrief},
	{name: "mapping for number", doc: "nominal: {frequency_hz: {a: 1}, voltage_v: 230}\n", line: 1, key: "nominal.frequency_hz", phrase: "must be a number, not a mapping", src: srcBrief},
	{name: "not a finite number", doc: "nominal: {frequency_hz: 50, voltage_v: .nan}\n", line: 1, key: "nominal.voltage_v", phrase: "must be a finite number", src: srcMeasure + " (never NaN or Inf)"},
	{name: "binary tag for text", doc: hdr1 + "site: !!binary aGVsbG8=\n", line: 4, key: "site", phrase: "must be text", src: srcBrief},
	{name: "channels not a list", doc: "nominal: {frequency_hz: 50, voltage_v: 230}\nchannels: {name: va}\n", line: 2, key: "channels", phrase: "must be a list of channels", src: srcBrief},

	// nominal.
	{name: "frequency 55", doc: "nominal: {frequency_hz: 55, voltage_v: 230}\nchannels: [{name: va, kind: voltage, phase: a}]\n", line: 1, key: "nominal.frequency_hz", phrase: "55 Hz is not allowed; use 50 or 60", src: srcDesign},
	{name: "frequency missing", doc: "nominal: {voltage_v: 230}\nchannels: [{name: va, kind: voltage, phase: a}]\n", line: 1, col: 10, key: "nominal.frequency_hz", phrase: "required: 50 or 60", src: srcDesign},
	{name: "nominal missing", doc: "channels: [{name: va, kind: voltage, phase: a}]\n", line: 1, key: "nominal", phrase: "required: frequency_hz (50 or 60) and voltage_v", src: srcDesign},
	{name: "nominal empty", doc: "site: x\nnominal:\nchannels: [{name: va, kind: voltage, phase: a}]\n", line: 2, col: 1, key: "nominal", phrase: "required", src: srcDesign},
	{name: "voltage missing", doc: "nominal: {frequency_hz: 60}\nchannels: [{name: va, kind: voltage, phase: a}]\n", line: 1, key: "nominal.voltage_v", phrase: "required: the declared voltage", src: srcDesign},
	{name: "voltage zero", doc: "nominal: {frequency_hz: 60, voltage_v: 0}\nchannels: [{name: va, kind: voltage, phase: a}]\n", line: 1, key: "nominal.voltage_v", phrase: "must be more than 0 V", src: srcDesign},
	{name: "current negative", doc: "nominal: {frequency_hz: 60, voltage_v: 277, current_a: -1}\nchannels: [{name: va, kind: voltage, phase: a}]\n", line: 1, key: "nominal.current_a", phrase: "must not be negative", src: srcDesign},

	// wiring, rates, scalars.
	{name: "delta with a phase-to-neutral voltage", doc: hdr1 + "wiring: delta\n", line: 3, key: "channels[0].phase", phrase: "delta voltages are line-to-line", src: srcDesign + " (Delta wiring)"},
	{name: "delta with a neutral CT", doc: hdrD + "  - {name: ia, kind: current, phase: a}\n  - {name: ic, kind: current, phase: c}\n  - {name: in, kind: current, phase: n}\n", line: 8, key: "channels[4].phase", phrase: "has no neutral", src: srcDesign + " (Delta wiring)"},
	{name: "delta with one CT", doc: hdrD + "  - {name: ia, kind: current, phase: a}\n", line: 6, key: "channels[2].phase", phrase: "one current (phase a) cannot give a three-wire total", src: "Blondel's theorem (REFERENCE §8)"},
	{name: "delta two CTs off the shared phase", doc: hdrD + "  - {name: ia, kind: current, phase: a}\n  - {name: ib, kind: current, phase: b}\n", line: 4, key: "channels", phrase: "two CTs (on a and b) need the voltages to the phase without a CT, ac and bc", src: srcDesign + " (Delta wiring: both voltages share the phase without a CT)"},
	{name: "delta line twice", doc: hdrD + "  - {name: vba, kind: voltage, phase: ba}\n", line: 6, key: "channels[2].phase", phrase: "a second voltage on line ab", src: "common practice, no source"},
	{name: "circuit: a current in none", doc: hdrC + "circuits:\n  - {name: m, currents: [ia]}\n", line: 6, key: "channels[2].name", phrase: "current i2 is in no circuit", src: "README Several circuits on one bus"},
	{name: "circuit: a current twice", doc: hdrC + "circuits:\n  - {name: m, currents: [ia]}\n  - {name: n, currents: [ia, i2]}\n", line: 9, key: "circuits[1].currents[0]", phrase: "ia already belongs to circuit m", src: "README Several circuits on one bus"},
	{name: "circuit: a voltage", doc: hdrC + "circuits:\n  - {name: m, currents: [va, ia, i2]}\n", line: 8, key: "circuits[0].currents[0]", phrase: "va is a voltage channel", src: "README Several circuits on one bus"},
	{name: "circuit: unknown channel", doc: hdrC + "circuits:\n  - {name: m, currents: [ix]}\n", line: 8, key: "circuits[0].currents[0]", phrase: `"ix" is not a configured channel`, src: "README Several circuits on one bus"},
	{name: "circuit: two on one phase", doc: hdrC + "circuits:\n  - {name: m, currents: [ia, i2]}\n", line: 8, key: "circuits[0].currents[1]", phrase: "ia and i2 are both on phase a of circuit m", src: "README Several circuits on one bus"},
	{name: "circuit: pf alarm without circuit", doc: hdrC + "circuits:\n  - {name: m, currents: [ia]}\n  - {name: n, currents: [i2]}\nalarms:\n  - {name: x, metric: pf, below: 0.9}\n", line: 11, key: "alarms[0].circuit", phrase: "required with circuits", src: "README Several circuits on one bus"},
	{name: "circuit: unbalance_current_pct without circuit", doc: hdrW + "alarms:\n  - {name: x, metric: unbalance_current_pct, above: 5}\n", line: 15, key: "alarms[0].circuit", phrase: "required with circuits: the circuit whose unbalance_current_pct is watched (circuits: m, n)", src: srcUnbCirc},
	{name: "circuit: unbalance_current_pct of an unknown circuit", doc: hdrW + "alarms:\n  - {name: x, metric: unbalance_current_pct, circuit: p, above: 5}\n", line: 15, key: "alarms[0].circuit", phrase: `no circuit is named "p" (circuits: m, n)`, src: srcUnbCirc},
	{name: "circuit: unbalance_current_pct on two phases", doc: hdrW + "alarms:\n  - {name: x, metric: unbalance_current_pct, circuit: n, above: 5}\n", line: 15, key: "alarms[0].metric", phrase: "needs current channels on phases a, b and c in circuit n; phase c has none", src: "IEC 61000-4-30 unbalance: three phases; " + srcUnbCirc},
	{name: "circuit: unbalance_voltage_pct with circuit", doc: hdrW + "alarms:\n  - {name: x, metric: unbalance_voltage_pct, circuit: m, above: 2}\n", line: 15, key: "alarms[0].circuit", phrase: "does not apply to unbalance_voltage_pct (a system-wide value)", src: srcUnbCirc + " (the voltages are the bus's)"},
	{name: "summary_circuits without circuits", doc: hdr3 + "mqtt: {broker: \"tcp://127.0.0.1:1883\", summary_circuits: [m]}\n", line: 10, key: "mqtt.summary_circuits", phrase: "there are no circuits; remove the key, or add circuits", src: srcSumCirc},
	{name: "summary_circuits unknown", doc: hdrW + "mqtt: {broker: \"tcp://127.0.0.1:1883\", summary_circuits: [m, p]}\n", line: 14, key: "mqtt.summary_circuits[1]", phrase: `no circuit is named "p" (circuits: m, n)`, src: srcSumCirc},
	{name: "summary_circuits twice", doc: hdrW + "mqtt: {broker: \"tcp://127.0.0.1:1883\", summary_circuits: [m, n, m]}\n", line: 14, key: "mqtt.summary_circuits[2]", phrase: `"m" is listed twice`, src: srcSumCirc},
	{name: "circuit key without circuits", doc: hdr1 + "  - {name: ia, kind: current, phase: a}\nalarms:\n  - {name: x, metric: pf, circuit: m, below: 0.9}\n", line: 6, key: "alarms[0].circuit", phrase: "there are no circuits", src: "README Several circuits on one bus"},
	{name: "line-to-line on wye", doc: "nominal: {frequency_hz: 50, voltage_v: 230}\nchannels:\n  - {name: vab, kind: voltage, phase: ab}\n", line: 3, key: "channels[0].phase", phrase: "ab is a line-to-line voltage, for wiring: delta", src: srcDesign + " (Delta wiring)"},
	{name: "wiring unknown", doc: hdr1 + "wiring: star\n", line: 4, key: "wiring", phrase: `"star" is not allowed; use single-phase, wye or delta`, src: srcDesign},
	{name: "rate at the 60 Hz floor", doc: "nominal: {frequency_hz: 60, voltage_v: 277}\nchannels: [{name: va, kind: voltage, phase: a}]\nsample_rate_hz: 6900\n", line: 3, key: "sample_rate_hz", phrase: "must exceed twice that, 6900 Hz", src: srcRate + ": 2·50·69 = 6900"},
	{name: "rate under the 50 Hz floor", doc: hdr1 + "sample_rate_hz: 5000\n", line: 4, key: "sample_rate_hz", phrase: "order 50 lies at 2875 Hz, so sampling must exceed twice that, 5750 Hz", src: srcRate + ": 50·57.5 = 2875, 2·2875 = 5750"},
	{name: "rate under a listed order", doc: hdr1 + "harmonics: [5, 7]\nsample_rate_hz: 800\n", line: 5, key: "sample_rate_hz", phrase: "the highest listed order is 7", src: srcRate + ": 2·7·57.5 = 805"},
	{name: "rate negative", doc: hdr1 + "sample_rate_hz: -1\n", line: 4, key: "sample_rate_hz", phrase: "must not be negative", src: srcBrief},
	{name: "rate absurd", doc: hdr1 + "sample_rate_hz: 5e6\n", line: 4, key: "sample_rate_hz", phrase: "out of range", src: "common practice, no source (1 MHz cap)"},
	{name: "il_a negative", doc: hdr1 + "il_a: -160\n", line: 4, key: "il_a", phrase: "must not be negative", src: srcBrief},
	{name: "isc_a negative", doc: hdr1 + "isc_a: -1\n", line: 4, key: "isc_a", phrase: "must not be negative", src: srcBrief},
	{name: "lock_min_pct zero", doc: hdr1 + "lock_min_pct: 0\n", line: 4, key: "lock_min_pct", phrase: "more than 0 and less than 100", src: srcBrief},
	{name: "lock_min_pct 100", doc: hdr1 + "lock_min_pct: 100\n", line: 4, key: "lock_min_pct", phrase: "more than 0 and less than 100", src: srcBrief},

	// events (DESIGN "Voltage events"; REFERENCE 2.4 typical settings, from memory).
	{name: "interruption above dip", doc: hdr1 + "events: {dip_pct: 85, interruption_pct: 90}\n", line: 4, key: "events.interruption_pct", phrase: "less than dip_pct (85)", src: srcDesign},
	{name: "dip at 100", doc: hdr1 + "events: {dip_pct: 99}\n", line: 4, key: "events.dip_pct", phrase: "dip_pct + hysteresis_pct less than 100", src: srcDesign},
	{name: "swell under 100", doc: hdr1 + "events: {swell_pct: 101}\n", line: 4, key: "events.swell_pct", phrase: "more than 100", src: srcDesign},
	{name: "negative hysteresis", doc: hdr1 + "events: {hysteresis_pct: -1}\n", line: 4, key: "events.hysteresis_pct", phrase: "out of range", src: srcDesign},
	{name: "capture too long", doc: hdr1 + "events: {max_capture_s: 61}\n", line: 4, key: "events.max_capture_s", phrase: "at most 60 seconds", src: "common practice, no source (60 s cap)"},
	{name: "disturbance on csv", doc: hdr1 + "source: {kind: csv, path: x.csv, disturbances: [{at: 1s, level_pct: 50, duration: 1s}]}\n", line: 4, key: "source.disturbances", phrase: "kind sim only", src: srcDesign},
	{name: "disturbance level missing", doc: hdr1 + "source: {kind: sim, disturbances: [{at: 1s, duration: 1s}]}\n", line: 4, key: "source.disturbances[0].level_pct", phrase: "0 to 200", src: srcDesign},
	{name: "disturbance phase d", doc: hdr1 + "source: {kind: sim, disturbances: [{at: 1s, level_pct: 50, duration: 1s, phases: ad}]}\n", line: 4, key: "source.disturbances[0].phases", phrase: "letters from a, b, c", src: srcDesign},
	{name: "events key typo", doc: hdr1 + "events: {dip_pc: 80}\n", line: 4, key: "events.dip_pc", phrase: "unknown key", src: srcDesign},

	// harmonics.
	{name: "harmonic order 51", doc: hdr1 + "harmonics: [1, 51]\n", line: 4, col: 16, key: "harmonics[1]", phrase: "order 51 is out of range; list orders from 2 to 50", src: srcMeasure},
	{name: "harmonic order 0", doc: hdr1 + "harmonics: [0]\n", line: 4, key: "harmonics[0]", phrase: "out of range", src: srcMeasure},
	{name: "harmonic order twice", doc: hdr1 + "harmonics:\n  - 5\n  - 5\n", line: 6, key: "harmonics[1]", phrase: "order 5 is listed twice (first at line 5)", src: srcBrief},
	{name: "harmonic order fraction", doc: hdr1 + "harmonics: [5.5]\n", line: 4, key: "harmonics[0]", phrase: "must be a whole number, a harmonic order from 2 to 50", src: srcBrief},
	{name: "harmonics word", doc: hdr1 + "harmonics: some\n", line: 4, key: "harmonics", phrase: `"some" is not allowed; use all, or a list of orders from 2 to 50`, src: srcDesign},

	// channels.
	{name: "no channels", doc: "nominal: {frequency_hz: 50, voltage_v: 230}\nchannels: []\n", line: 2, key: "channels", phrase: "no channels", src: srcBrief},
	{name: "channels missing", doc: "nominal: {frequency_hz: 50, voltage_v: 230}\n", line: 1, key: "channels", phrase: "no channels", src: srcBrief},
	{name: "no voltage channel", doc: "nominal: {frequency_hz: 50, voltage_v: 230}\nchannels: [{name: ia, kind: current, phase: a}]\n", line: 2, key: "channels", phrase: "no voltage channel", src: srcBrief},
	{name: "name missing", doc: "nominal: {frequency_hz: 50, voltage_v: 230}\nchannels:\n  - {kind: voltage, phase: a}\n", line: 3, key: "channels[0].name", phrase: "required", src: srcBrief},
	{name: "name with space", doc: "nominal: {frequency_hz: 50, voltage_v: 230}\nchannels:\n  - {name: \"v a\", kind: voltage, phase: a}\n", line: 3, key: "channels[0].name", phrase: "must not contain commas or white space", src: srcBrief},
	{name: "name with comma", doc: "nominal: {frequency_hz: 50, voltage_v: 230}\nchannels:\n  - {name: \"v,a\", kind: voltage, phase: a}\n", line: 3, key: "channels[0].name", phrase: "must not contain commas", src: srcBrief},
	{name: "name empty", doc: "nominal: {frequency_hz: 50, voltage_v: 230}\nchannels:\n  - {name: \"\", kind: voltage, phase: a}\n", line: 3, key: "channels[0].name", phrase: "must not be empty", src: srcMQTT},
	{name: "duplicate names", doc: hdr1 + "  - {name: va, kind: current, phase: a}\n", line: 4, key: "channels[1].name", phrase: `"va" is used twice (first at line 3)`, src: srcBrief},
	{name: "names collide as topic levels", doc: "nominal: {frequency_hz: 50, voltage_v: 230}\nchannels:\n  - {name: v+a, kind: voltage, phase: a}\n  - {name: v#a, kind: voltage, phase: b}\n", line: 4, key: "channels[1].name", phrase: `both become the MQTT topic level "v_a"`, src: srcMQTT},
	{name: "kind missing", doc: "nominal: {frequency_hz: 50, voltage_v: 230}\nchannels:\n  - {name: va, phase: a}\n", line: 3, key: "channels[0].kind", phrase: "required: voltage or current", src: srcDesign},
	{name: "kind unknown", doc: "nominal: {frequency_hz: 50, voltage_v: 230}\nchannels:\n  - {name: va, kind: volt, phase: a}\n", line: 3, key: "channels[0].kind", phrase: `"volt" is not allowed; use one of: voltage, current`, src: srcDesign},
	{name: "phase missing", doc: "nominal: {frequency_hz: 50, voltage_v: 230}\nchannels:\n  - {name: va, kind: voltage}\n", line: 3, key: "channels[0].phase", phrase: "required: a, b or c", src: srcDesign},
	{name: "phase d", doc: "nominal: {frequency_hz: 50, voltage_v: 230}\nchannels:\n  - {name: va, kind: voltage, phase: d}\n", line: 3, key: "channels[0].phase", phrase: "use one of: a, b, c, n, ab, bc, ca, ba, cb, ac", src: srcDesign},
	{name: "voltage on neutral", doc: "nominal: {frequency_hz: 50, voltage_v: 230}\nchannels:\n  - {name: vn, kind: voltage, phase: n}\n", line: 3, key: "channels[0].phase", phrase: "n is for a neutral current", src: srcDesign},
	{name: "scale zero", doc: "nominal: {frequency_hz: 50, voltage_v: 230}\nchannels:\n  - {name: va, kind: voltage, phase: a, scale: 0}\n", line: 3, key: "channels[0].scale", phrase: "must not be 0", src: srcBrief},
	{name: "full_scale negative", doc: "nominal: {frequency_hz: 50, voltage_v: 230}\nchannels:\n  - {name: va, kind: voltage, phase: a, full_scale: -400}\n", line: 3, key: "channels[0].full_scale", phrase: "must not be negative", src: srcBrief},
	{name: "delay a cycle", doc: "nominal: {frequency_hz: 50, voltage_v: 230}\nchannels:\n  - {name: va, kind: voltage, phase: a, delay_us: 20000}\n", line: 3, key: "channels[0].delay_us", phrase: "a cycle or more at 50 Hz", src: "analytic: one period at 50 Hz = 20000 µs"},
	{name: "two voltages on a phase", doc: hdr1 + "  - {name: va2, kind: voltage, phase: a}\n", line: 4, key: "channels[1].phase", phrase: "a second voltage channel on phase a (first: va, line 3)", src: srcDesign + " (one voltage per phase)"},
	{name: "too many channels", doc: "nominal: {frequency_hz: 50, voltage_v: 230}\nchannels: [" + strings.Repeat("{name: x},", 65) + "]\n", line: 2, key: "channels", phrase: "65 entries; at most 64", src: "common practice, no source (64-channel cap)"},
	{name: "wye current without voltage", doc: hdr1 + "  - {name: ib, kind: current, phase: b}\n", line: 4, key: "channels[1].phase", phrase: "a phase with a current but no voltage", src: srcBrief},
	{name: "single-phase two voltages", doc: hdr1 + "  - {name: vb, kind: voltage, phase: b}\nwiring: single-phase\n", line: 5, key: "wiring", phrase: "exactly one voltage channel, on phase a", src: srcBrief},
	{name: "single-phase voltage on b", doc: "nominal: {frequency_hz: 50, voltage_v: 230}\nwiring: single-phase\nchannels: [{name: vb, kind: voltage, phase: b}]\n", line: 2, key: "wiring", phrase: "on phase a", src: srcBrief},
	{name: "single-phase current on c", doc: hdr1 + "  - {name: ic, kind: current, phase: c}\nwiring: single-phase\n", line: 4, key: "channels[1].phase", phrase: "currents on phase a (and n) only, not c", src: srcBrief},

	// reference.
	{name: "reference unknown", doc: hdr3 + "reference: vx\n", line: 10, col: 12, key: "reference", phrase: `no channel is named "vx"; the reference is a voltage channel: va, vb, vc`, src: srcDesign},
	{name: "reference a current", doc: hdr3 + "reference: ia\n", line: 10, key: "reference", phrase: `"ia" is a current channel`, src: srcMeasure},

	// names that become topic levels.
	{name: "site empty", doc: hdr1 + "site: \"\"\n", line: 4, key: "site", phrase: "must not be empty", src: srcMQTT},
	{name: "site control character", doc: hdr1 + "site: \"a\\ab\"\n", line: 4, key: "site", phrase: "control character U+0007", src: srcMQTT},
	{name: "gateway empty", doc: hdr1 + "gateway: ''\n", line: 4, key: "gateway", phrase: "must not be empty", src: srcMQTT},

	// source.
	{name: "source kind missing", doc: hdr1 + "source: {speed: 2}\n", line: 4, key: "source.kind", phrase: "required: sim, csv, wav, pcm", src: srcDaemon},
	{name: "source kind live", doc: hdr1 + "source: {kind: live}\n", line: 4, key: "source.kind", phrase: "use one of: sim, csv, wav", src: srcDaemon},
	{name: "csv without path", doc: hdr1 + "source: {kind: csv}\n", line: 4, key: "source.path", phrase: "required for kind csv", src: srcBrief},
	{name: "speed with wav", doc: hdr1 + "source: {kind: wav, path: a.wav, speed: 2}\n", line: 4, key: "source.speed", phrase: "applies to kind sim only", src: srcBrief},
	{name: "path with sim", doc: hdr1 + "source: {kind: sim, path: a.csv}\n", line: 4, key: "source.path", phrase: "applies to kinds csv, wav, pcm and comtrade", src: srcBrief},
	{name: "pcm without rate", doc: hdr1 + "source: {kind: pcm, path: '-', format: s16le}\n", line: 4, key: "source", phrase: "kind pcm needs sample_rate_hz", src: srcSources},
	{name: "pcm without format", doc: hdr1 + "sample_rate_hz: 10240\nsource: {kind: pcm, path: '-'}\n", line: 5, key: "source.format", phrase: "required for kind pcm: one of s16le, s24le, s32le, f32le", src: srcSources},
	{name: "pcm bad format", doc: hdr1 + "sample_rate_hz: 10240\nsource: {kind: pcm, path: '-', format: s16be}\n", line: 5, key: "source.format", phrase: "use one of: s16le, s24le, s32le, f32le", src: srcSources},
	{name: "pcm path and connect", doc: hdr1 + "sample_rate_hz: 10240\nsource: {kind: pcm, path: a.raw, connect: '127.0.0.1:7001', format: s16le}\n", line: 5, key: "source.connect", phrase: "not both", src: srcSources},
	{name: "pcm neither path nor connect", doc: hdr1 + "sample_rate_hz: 10240\nsource: {kind: pcm, format: s16le}\n", line: 5, key: "source.path", phrase: "required for kind pcm", src: srcSources},
	{name: "pcm connect not host:port", doc: hdr1 + "sample_rate_hz: 10240\nsource: {kind: pcm, connect: localhost, format: s16le}\n", line: 5, key: "source.connect", phrase: "is not host:port", src: srcSources},
	{name: "framing on csv", doc: hdr1 + "source: {kind: csv, path: a.csv, framing: glf1}\n", line: 4, key: "source.framing", phrase: "applies to kind pcm only", src: srcSources},
	{name: "pcm bad framing", doc: hdr1 + "sample_rate_hz: 10240\nsource: {kind: pcm, path: '-', format: s16le, framing: slip}\n", line: 5, key: "source.framing", phrase: "use one of: raw, glf1", src: srcSources},
	{name: "iio without device", doc: hdr1 + "source: {kind: iio}\n", line: 4, key: "source.device", phrase: "required for kind iio", src: srcSources},
	{name: "iio channel without element", doc: hdr1 + "source: {kind: iio, device: iio:device0}\n", line: 3, key: "channels[0]", phrase: "needs iio: the scan element", src: srcSources},
	{name: "iio with path", doc: hdr1 + "source: {kind: iio, device: x, path: /dev/x}\n", line: 4, key: "source.path", phrase: "does not apply to kind iio", src: srcSources},
	{name: "device on pcm", doc: hdr1 + "sample_rate_hz: 10240\nsource: {kind: pcm, path: '-', format: s16le, device: x}\n", line: 5, key: "source.device", phrase: "applies to kind iio only", src: srcSources},
	{name: "comtrade index zero", doc: "nominal: {frequency_hz: 50, voltage_v: 230}\nchannels:\n  - {name: va, kind: voltage, phase: a, comtrade: 0}\n", line: 3, key: "channels[0].comtrade", phrase: "0 is out of range; allowed: 1 to 4096", src: srcSources},
	{name: "speed negative", doc: hdr1 + "source: {kind: sim, speed: -1}\n", line: 4, key: "source.speed", phrase: "must not be negative", src: srcBrief},

	// store.
	{name: "commit_every zero", doc: hdr1 + "store: {commit_every: 0s}\n", line: 4, key: "store.commit_every", phrase: "must be more than 0", src: srcDaemon},
	{name: "duration without unit", doc: hdr1 + "store: {commit_every: 60}\n", line: 4, key: "store.commit_every", phrase: "not a duration: give a number with a unit", src: "Go time.ParseDuration syntax"},
	{name: "duration as interval label", doc: hdr1 + "store:\n  retention:\n    10min: 10min\n", line: 6, key: "store.retention.10min", phrase: "(write 10m)", src: "Go time.ParseDuration syntax"},
	{name: "retention zero", doc: hdr1 + "store: {retention: {2h: 0s}}\n", line: 4, key: "store.retention.2h", phrase: "must be more than 0", src: srcDaemon},
	{name: "negative duration", doc: hdr1 + "store: {commit_every: -5s}\n", line: 4, key: "store.commit_every", phrase: "must not be negative", src: srcBrief},
	{name: "max_size_mb zero", doc: hdr1 + "store: {max_size_mb: 0}\n", line: 4, key: "store.max_size_mb", phrase: "allowed: 1 to 2047", src: "bbolt maxMapSize on 32-bit targets (just under 2 GiB)"},
	{name: "max_size_mb huge", doc: hdr1 + "store: {max_size_mb: 99999999999}\n", line: 4, key: "store.max_size_mb", phrase: "allowed: 1 to 2047", src: "bbolt maxMapSize on 32-bit targets (just under 2 GiB)"},
	{name: "max_size_mb fraction", doc: hdr1 + "store: {max_size_mb: 1.5}\n", line: 4, key: "store.max_size_mb", phrase: "must be a whole number", src: srcBrief},
	{name: "on_damage unknown", doc: hdr1 + "store: {on_damage: delete}\n", line: 4, key: "store.on_damage", phrase: "use one of: set_aside, fail", src: "README, The store: on_damage values"},
	{name: "telemetry_qos 3", doc: hdr1 + "mqtt: {telemetry_qos: {3s: 3}}\n", line: 4, key: "mqtt.telemetry_qos.3s", phrase: "allowed: 0 to 2", src: "MQTT 3.1.1 section 4.3: QoS levels 0, 1 and 2"},
	{name: "telemetry_qos level", doc: hdr1 + "mqtt: {telemetry_qos: {1min: 1}}\n", line: 4, key: "mqtt.telemetry_qos.1min", phrase: "unknown key", src: srcBrief},

	// mqtt.
	{name: "both password sources", doc: hdr1 + "mqtt: {username: u, password_file: p, password_env: P}\n", line: 4, key: "mqtt.password_env", phrase: "set password_file or password_env, not both", src: srcBrief},
	{name: "password without user", doc: hdr1 + "mqtt: {password_env: P}\n", line: 4, key: "mqtt.username", phrase: "MQTT 3.1.1 §3.1.2.9", src: "MQTT 3.1.1 §3.1.2.9: password flag needs the user name flag"},
	{name: "cert without key", doc: hdr1 + "mqtt:\n  broker: ssl://127.0.0.1:8883\n  tls: {cert: c.pem}\n", line: 6, key: "mqtt.tls.key", phrase: "required with tls.cert", src: srcBrief},
	{name: "key without cert", doc: hdr1 + "mqtt:\n  broker: ssl://127.0.0.1:8883\n  tls: {key: k.pem}\n", line: 6, key: "mqtt.tls.cert", phrase: "required with tls.key", src: srcBrief},
	{name: "listen without embedded", doc: hdr1 + "mqtt:\n  broker: tcp://127.0.0.1:1883\n  listen: 127.0.0.1:1883\n", line: 6, key: "mqtt.listen", phrase: "only with broker: embedded", src: "common practice, no source"},
	{name: "listen not host:port", doc: hdr1 + "mqtt:\n  broker: embedded\n  listen: 1883\n", line: 6, key: "mqtt.listen", phrase: "not host:port", src: "Go net.SplitHostPort syntax"},
	{name: "listen beyond loopback in the clear", doc: hdr1 + "mqtt:\n  broker: embedded\n  listen: 0.0.0.0:1883\n", line: 6, key: "mqtt.listen", phrase: "beyond loopback", src: "DESIGN.md: embedded broker loopback only unless TLS and credentials"},
	{name: "tls with tcp broker", doc: hdr1 + "mqtt:\n  broker: tcp://127.0.0.1:1883\n  tls: {ca: ca.pem}\n", line: 6, key: "mqtt.tls", phrase: "applies to ssl:// brokers", src: "common practice, no source"},
	{name: "broker scheme", doc: hdr1 + "mqtt: {broker: \"http://127.0.0.1:1883\"}\n", line: 4, key: "mqtt.broker", phrase: `use "" (off), tcp://host:port, ssl://host:port or embedded`, src: srcDaemon},
	{name: "broker without port", doc: hdr1 + "mqtt: {broker: \"tcp://127.0.0.1\"}\n", line: 4, key: "mqtt.broker", phrase: "needs a host and a port", src: srcDaemon},
	{name: "broker with path", doc: hdr1 + "mqtt: {broker: \"tcp://127.0.0.1:1883/x\"}\n", line: 4, key: "mqtt.broker", phrase: "scheme://host:port only", src: srcDaemon},
	{name: "client_id empty", doc: hdr1 + "mqtt: {client_id: ''}\n", line: 4, key: "mqtt.client_id", phrase: "must not be empty", src: srcDaemon},
	{name: "prefix with empty level", doc: hdr1 + "mqtt: {topic_prefix: a//b}\n", line: 4, key: "mqtt.topic_prefix", phrase: "empty level", src: srcMQTT},
	{name: "prefix with wildcard", doc: hdr1 + "mqtt: {topic_prefix: a/+/b}\n", line: 4, key: "mqtt.topic_prefix", phrase: "must not contain + or #", src: srcMQTT},
	{name: "prefix reserved", doc: hdr1 + "mqtt: {topic_prefix: $SYS}\n", line: 4, key: "mqtt.topic_prefix", phrase: "start with $", src: srcMQTT},
	{name: "telemetry 200ms", doc: hdr1 + "mqtt: {telemetry: [200ms]}\n", line: 4, key: "mqtt.telemetry[0]", phrase: "use one of: 3s, 10min, 2h", src: srcDaemon},
	{name: "telemetry twice", doc: hdr1 + "mqtt: {telemetry: [3s, 3s]}\n", line: 4, key: "mqtt.telemetry[1]", phrase: "3s is listed twice", src: srcBrief},
	{name: "telemetry scalar", doc: hdr1 + "mqtt: {telemetry: 10min}\n", line: 4, key: "mqtt.telemetry", phrase: "must be a list of interval labels", src: srcDaemon},

	// alarms.
	{name: "alarm metric unknown", doc: hdr3 + "alarms: [{name: x, metric: thd, channel: ia, above: 5}]\n", line: 10, key: "alarms[0].metric", phrase: "use one of: rms, thd_pct, thd_h50_pct, tdd_pct, tdd_h50_pct, crest_factor, pct, pct_il, pf, dpf, freq_hz, unbalance_voltage_pct, unbalance_current_pct", src: srcBrief},
	{name: "alarm name missing", doc: hdr3 + "alarms: [{metric: rms, channel: ia, above: 5}]\n", line: 10, key: "alarms[0].name", phrase: "required", src: srcBrief},
	{name: "alarm metric missing", doc: hdr3 + "alarms: [{name: x, channel: ia, above: 5}]\n", line: 10, key: "alarms[0].metric", phrase: "required: one of rms", src: srcBrief},
	{name: "alarm names twice", doc: hdr3 + "alarms:\n  - {name: x, metric: rms, channel: ia, above: 5}\n  - {name: x, metric: rms, channel: ib, above: 5}\n", line: 12, key: "alarms[1].name", phrase: `"x" is used twice (first at line 11)`, src: srcBrief},
	{name: "h50 needs harmonics all", doc: hdr3 + "harmonics: [5, 7]\nalarms: [{name: x, metric: thd_h50_pct, channel: va, above: 5}]\n", line: 11, key: "alarms[0].metric", phrase: "needs harmonics: all", src: srcMeasure},
	{name: "tdd needs il_a", doc: hdr1 + "  - {name: ia, kind: current, phase: a}\nalarms: [{name: x, metric: tdd_pct, channel: ia, above: 5}]\n", line: 5, key: "alarms[0].metric", phrase: "set il_a", src: srcMeasure + " (TDD uses IL)"},
	{name: "pct_il needs il_a", doc: hdr1 + "  - {name: ia, kind: current, phase: a}\nalarms: [{name: x, metric: pct_il, channel: ia, harmonic: 5, above: 5}]\n", line: 5, key: "alarms[0].metric", phrase: "set il_a", src: srcMeasure},
	{name: "tdd on a voltage", doc: hdr3 + "alarms: [{name: x, metric: tdd_pct, channel: va, above: 5}]\n", line: 10, key: "alarms[0].channel", phrase: `"va" is a voltage channel`, src: srcMeasure},
	{name: "alarm channel unknown", doc: hdr3 + "alarms: [{name: x, metric: rms, channel: iz, above: 5}]\n", line: 10, key: "alarms[0].channel", phrase: `no channel is named "iz"`, src: srcBrief},
	{name: "alarm channel missing", doc: hdr3 + "alarms: [{name: x, metric: rms, above: 5}]\n", line: 10, key: "alarms[0].channel", phrase: "required for rms", src: srcBrief},
	{name: "phase on a channel metric", doc: hdr3 + "alarms: [{name: x, metric: rms, channel: ia, phase: a, above: 5}]\n", line: 10, key: "alarms[0].phase", phrase: "applies to pf and dpf", src: srcBrief},
	{name: "channel on pf", doc: hdr3 + "alarms: [{name: x, metric: pf, channel: ia, below: 0.9}]\n", line: 10, key: "alarms[0].channel", phrase: "set phase (a, b, c or total)", src: srcBrief},
	{name: "pf phase without a pair", doc: hdr1 + "  - {name: vb, kind: voltage, phase: b}\n  - {name: ia, kind: current, phase: a}\nalarms: [{name: x, metric: pf, phase: b, below: 0.9}]\n", line: 6, key: "alarms[0].phase", phrase: "phase b has no voltage and current pair", src: srcDesign + " (phases need a voltage and a current)"},
	{name: "pf without any current", doc: hdr1 + "alarms: [{name: x, metric: pf, below: 0.9}]\n", line: 4, key: "alarms[0].metric", phrase: "needs a phase with both a voltage and a current", src: srcDesign},
	{name: "pf phase n", doc: hdr3 + "alarms: [{name: x, metric: pf, phase: n, below: 0.9}]\n", line: 10, key: "alarms[0].phase", phrase: "use one of: a, b, c, total", src: srcBrief},
	{name: "above and below", doc: hdr3 + "alarms: [{name: x, metric: rms, channel: ia, above: 5, below: 1}]\n", line: 10, key: "alarms[0].below", phrase: "set exactly one of above or below", src: srcBrief},
	{name: "no threshold", doc: hdr3 + "alarms:\n  - {name: x, metric: rms, channel: ia}\n", line: 11, key: "alarms[0]", phrase: "set exactly one of above or below", src: srcBrief},
	{name: "pct without harmonic", doc: hdr3 + "alarms: [{name: x, metric: pct, channel: ia, above: 5}]\n", line: 10, key: "alarms[0].harmonic", phrase: "required for pct", src: srcBrief},
	{name: "harmonic not computed", doc: hdr3 + "harmonics: [5, 7]\nalarms: [{name: x, metric: pct, channel: ia, harmonic: 11, above: 5}]\n", line: 11, key: "alarms[0].harmonic", phrase: "order 11 is not computed", src: srcMeasure},
	{name: "harmonic 1", doc: hdr3 + "alarms: [{name: x, metric: pct, channel: ia, harmonic: 1, above: 5}]\n", line: 10, key: "alarms[0].harmonic", phrase: "allowed: 2 to 50", src: srcBrief},
	{name: "harmonic on rms", doc: hdr3 + "alarms: [{name: x, metric: rms, channel: ia, harmonic: 5, above: 5}]\n", line: 10, key: "alarms[0].harmonic", phrase: "applies to metrics pct and pct_il only", src: srcBrief},
	{name: "level 1h", doc: hdr3 + "alarms: [{name: x, metric: rms, channel: ia, level: 1h, above: 5}]\n", line: 10, key: "alarms[0].level", phrase: "use one of: 200ms, 3s, 10min, 2h", src: "DESIGN.md, Time: interval labels are a closed set"},
	{name: "severity high", doc: hdr3 + "alarms: [{name: x, metric: rms, channel: ia, severity: high, above: 5}]\n", line: 10, key: "alarms[0].severity", phrase: "use one of: info, warning, critical", src: srcBrief},
	{name: "pf threshold above 1", doc: hdr3 + "alarms: [{name: x, metric: pf, below: 1.5}]\n", line: 10, key: "alarms[0].below", phrase: "allowed: -1 to 1", src: "IEEE 1459: |PF| ≤ 1"},
	{name: "negative rms threshold", doc: hdr3 + "alarms: [{name: x, metric: rms, channel: ia, above: -5}]\n", line: 10, key: "alarms[0].above", phrase: "must not be negative for rms", src: "analytic: an RMS value is ≥ 0"},
	{name: "negative deadband", doc: hdr3 + "alarms: [{name: x, metric: rms, channel: ia, above: 5, deadband: -1}]\n", line: 10, key: "alarms[0].deadband", phrase: "must not be negative", src: srcBrief},
	{name: "negative on_delay", doc: hdr3 + "alarms: [{name: x, metric: rms, channel: ia, above: 5, on_delay: -5s}]\n", line: 10, key: "alarms[0].on_delay", phrase: "must not be negative", src: srcBrief},
	{name: "min_load_pct on a voltage", doc: hdr3 + "alarms: [{name: x, metric: thd_pct, channel: va, above: 5, min_load_pct: 10}]\n", line: 10, key: "alarms[0].min_load_pct", phrase: "applies to rules on current channels and to pf and dpf", src: srcDaemon},
	{name: "min_load_pct without base", doc: hdr1 + "  - {name: ia, kind: current, phase: a}\nalarms: [{name: x, metric: thd_pct, channel: ia, above: 5, min_load_pct: 10}]\n", line: 5, key: "alarms[0].min_load_pct", phrase: "needs a base: set il_a, or full_scale on current channel ia", src: srcDaemon},
	{name: "min_load_pct 150", doc: hdr3 + "alarms: [{name: x, metric: pf, below: 0.9, min_load_pct: 150}]\n", line: 10, key: "alarms[0].min_load_pct", phrase: "allowed: 0 to 100", src: srcBrief},
	{name: "unbalance on single-phase", doc: hdr1 + "wiring: single-phase\nalarms: [{name: x, metric: unbalance_voltage_pct, above: 2}]\n", line: 5, key: "alarms[0].metric", phrase: "needs wiring: wye", src: srcDesign + " (single-phase: no sequence or unbalance)"},
	{name: "current unbalance without ic", doc: hdr1 + "  - {name: vb, kind: voltage, phase: b}\n  - {name: ia, kind: current, phase: a}\n  - {name: ib, kind: current, phase: b}\nalarms: [{name: x, metric: unbalance_current_pct, above: 2}]\n", line: 7, key: "alarms[0].metric", phrase: "needs current channels on phases a, b and c; phase c has none", src: "IEC 61000-4-30 unbalance: three phases"},
	{name: "channel on freq", doc: hdr3 + "alarms: [{name: x, metric: freq_hz, channel: va, below: 49.5}]\n", line: 10, key: "alarms[0].channel", phrase: "does not apply to freq_hz", src: srcBrief},
	{name: "freq threshold zero", doc: hdr3 + "alarms: [{name: x, metric: freq_hz, below: 0}]\n", line: 10, key: "alarms[0].below", phrase: "must be more than 0 Hz", src: "common practice, no source"},
	{name: "event rule with level", doc: hdr3 + "alarms: [{name: sd, metric: event, kind: dip, level: 10min}]\n", line: 10, key: "alarms[0].level", phrase: `rule "sd": level does not apply to metric: event (the events section sets the thresholds); allowed keys: name, metric, kind, channel, on_delay, off_delay, severity`, src: srcEvRule},
	{name: "event rule with above", doc: hdr3 + "alarms: [{name: sd, metric: event, kind: dip, above: 90}]\n", line: 10, key: "alarms[0].above", phrase: `rule "sd": above does not apply to metric: event (the events section sets the thresholds); allowed keys: name, metric, kind, channel, on_delay, off_delay, severity`, src: srcEvRule},
	{name: "event rule with below", doc: hdr3 + "alarms: [{name: sd, metric: event, kind: dip, below: 90}]\n", line: 10, key: "alarms[0].below", phrase: `rule "sd": below does not apply to metric: event (the events section sets the thresholds); allowed keys: name, metric, kind, channel, on_delay, off_delay, severity`, src: srcEvRule},
	{name: "event rule with deadband", doc: hdr3 + "alarms: [{name: sd, metric: event, kind: dip, deadband: 1}]\n", line: 10, key: "alarms[0].deadband", phrase: `rule "sd": deadband does not apply to metric: event (the events section sets the thresholds); allowed keys: name, metric, kind, channel, on_delay, off_delay, severity`, src: srcEvRule},
	{name: "event rule with harmonic", doc: hdr3 + "alarms: [{name: sd, metric: event, kind: dip, harmonic: 5}]\n", line: 10, key: "alarms[0].harmonic", phrase: `rule "sd": harmonic does not apply to metric: event (the events section sets the thresholds); allowed keys: name, metric, kind, channel, on_delay, off_delay, severity`, src: srcEvRule},
	{name: "event rule with phase", doc: hdr3 + "alarms: [{name: sd, metric: event, kind: dip, phase: a}]\n", line: 10, key: "alarms[0].phase", phrase: `rule "sd": phase does not apply to metric: event (the events section sets the thresholds); allowed keys: name, metric, kind, channel, on_delay, off_delay, severity`, src: srcEvRule},
	{name: "event rule with min_load_pct", doc: hdr3 + "alarms: [{name: sd, metric: event, kind: dip, min_load_pct: 10}]\n", line: 10, key: "alarms[0].min_load_pct", phrase: `rule "sd": min_load_pct does not apply to metric: event (the events section sets the thresholds); allowed keys: name, metric, kind, channel, on_delay, off_delay, severity`, src: srcEvRule},
	{name: "event rule with relative_to", doc: hdr3 + "alarms: [{name: sd, metric: event, kind: dip, relative_to: baseline}]\n", line: 10, key: "alarms[0].relative_to", phrase: `rule "sd": relative_to does not apply to metric: event (the events section sets the thresholds); allowed keys: name, metric, kind, channel, on_delay, off_delay, severity`, src: srcEvRule},
	{name: "event rule with learn", doc: hdr3 + "alarms: [{name: sd, metric: event, kind: dip, learn: 72h}]\n", line: 10, key: "alarms[0].learn", phrase: `rule "sd": learn does not apply to metric: event (the events section sets the thresholds); allowed keys: name, metric, kind, channel, on_delay, off_delay, severity`, src: srcEvRule},
	{name: "event rule with circuit", doc: hdr3 + "alarms: [{name: sd, metric: event, kind: dip, circuit: m}]\n", line: 10, key: "alarms[0].circuit", phrase: `rule "sd": circuit does not apply to metric: event (the events section sets the thresholds); allowed keys: name, metric, kind, channel, on_delay, off_delay, severity`, src: srcEvRule},
	{name: "event kind unknown", doc: hdr3 + "alarms: [{name: sd, metric: event, kind: sag}]\n", line: 10, key: "alarms[0].kind", phrase: `rule "sd": kind "sag" is not allowed; use one of: dip, swell, interruption`, src: srcEvRule},
	{name: "event kind unknown in a list", doc: hdr3 + "alarms: [{name: sd, metric: event, kind: [dip, flicker]}]\n", line: 10, key: "alarms[0].kind[1]", phrase: `rule "sd": kind "flicker" is not allowed; use one of: dip, swell, interruption`, src: srcEvRule},
	{name: "event kind twice", doc: hdr3 + "alarms: [{name: sd, metric: event, kind: [dip, dip]}]\n", line: 10, key: "alarms[0].kind[1]", phrase: `rule "sd": kind dip is listed twice`, src: srcEvRule},
	{name: "event kind a mapping", doc: hdr3 + "alarms: [{name: sd, metric: event, kind: {dip: 1}}]\n", line: 10, key: "alarms[0].kind", phrase: "must be", src: srcEvRule},
	{name: "kind on a record rule", doc: hdr3 + "alarms: [{name: x, metric: rms, channel: va, below: 200, kind: dip}]\n", line: 10, key: "alarms[0].kind", phrase: `rule "x": kind applies to metric: event only`, src: srcEvRule},
	{name: "event rule on a current channel", doc: hdr3 + "alarms: [{name: sd, metric: event, channel: ia}]\n", line: 10, key: "alarms[0].channel", phrase: `rule "sd": "ia" is a current channel; voltage events are on voltage channels (va, vb, vc)`, src: srcEvRule},
	{name: "event rule on an unknown channel", doc: hdr3 + "alarms: [{name: sd, metric: event, channel: vx}]\n", line: 10, key: "alarms[0].channel", phrase: `rule "sd": no channel is named "vx"; allowed: a voltage channel (va, vb, vc), or leave channel out`, src: srcEvRule},
	{name: "event rule negative off_delay", doc: hdr3 + "alarms: [{name: sd, metric: event, off_delay: -1m}]\n", line: 10, key: "alarms[0].off_delay", phrase: "must not be negative", src: srcEvRule},
	{name: "alarms not a list", doc: hdr3 + "alarms: {name: x}\n", line: 10, key: "alarms", phrase: "must be a list of alarm rules", src: srcBrief},
}

func TestParseBad(t *testing.T) {
	t.Parallel()
	for _, tc := range badCases {
		t.Run(tc.name, func(t *testing.T) {
			t.Parallel()
			c, err := Parse("bad.yaml", []byte(tc.doc))
			if err == nil {
				t.Fatalf("Parse accepted the document (src: %s); got %+v", tc.src, c)
			}
			var e *Error
			if !errors.As(err, &e) {
				t.Fatalf("error %T %v is not an *Error", err, err)
			}
			if !errors.Is(err, ErrInvalid) {
				t.Errorf("errors.Is(err, ErrInvalid) = false for %v", err)
			}
			if e.File != "bad.yaml" || e.Line != tc.line || e.Key != tc.key || !strings.Contains(e.Msg, tc.phrase) {
				t.Errorf("got  %s\nwant bad.yaml:%d: key %q, message containing %q (src: %s)", e, tc.line, tc.key, tc.phrase, tc.src)
			}
			if tc.col != 0 && e.Col != tc.col {
				t.Errorf("column = %d, want %d (%s)", e.Col, tc.col, e)
			}
			if want := fmt.Sprintf("bad.yaml:%d:", tc.line); !strings.HasPrefix(e.Error(), want) {
				t.Errorf("Error() = %q, want prefix %q", e.Error(), want)
			}
		})
	}
}
