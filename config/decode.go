package config

import (
	"bytes"
	"errors"
	"fmt"
	"io"
	"math"
	"regexp"
	"slices"
	"strconv"
	"strings"
	"time"

	"go.yaml.in/yaml/v3"
)

// sections lists the allowed keys of every mapping, by section name (list
// items share one name, e.g. "channels[]"). Read-only. The decoders below
// switch on the same names; a test walks this table against a fixture that
// sets every key and against Defaults.
var sections = map[string][]string{
	"": {"site", "gateway", "nominal", "wiring", "sample_rate_hz", "reference", "harmonics",
		"il_a", "isc_a", "lock_min_pct", "channels", "circuits", "source", "store", "mqtt", "alarms",
		"modbus", "http", "demand", "events"},
	"nominal":               {"frequency_hz", "voltage_v", "current_a"},
	"channels[]":            {"name", "kind", "phase", "scale", "offset", "full_scale", "delay_us", "comtrade", "iio"},
	"circuits[]":            {"name", "currents", "il_a"},
	"source":                {"kind", "speed", "path", "connect", "format", "framing", "device", "sysfs", "dev", "buffer_length", "disturbances"},
	"source.disturbances[]": {"at", "level_pct", "duration", "phases"},
	"store":                 {"path", "commit_every", "max_size_mb", "retention", "on_damage"},
	"store.retention":       {"3s", "10min", "2h"},
	"mqtt": {"broker", "listen", "client_id", "username", "password_file", "password_env", "tls",
		"topic_prefix", "telemetry", "telemetry_qos", "summary", "summary_circuits"},
	"mqtt.tls":           {"ca", "cert", "key"},
	"mqtt.telemetry_qos": {"3s", "10min", "2h"},
	"modbus":             {"listen", "unit_id", "word_order"},
	"http":               {"listen"},
	"demand":             {"interval", "method"},
	"events":             {"dip_pct", "swell_pct", "interruption_pct", "hysteresis_pct", "pre_cycles", "post_cycles", "max_capture_s"},
	"alarms[]": {"name", "metric", "channel", "phase", "level", "above", "below", "deadband",
		"on_delay", "off_delay", "severity", "min_load_pct", "harmonic", "circuit", "relative_to", "learn", "kind"},
}

// Bounds on list lengths keep a hostile file from costing much.
const (
	maxChannels = 64  // more than any gateway ADC this targets; common practice, no source
	maxAlarms   = 256 // common practice, no source
	// maxComtradeIndex bounds channels[].comtrade, a 1-based analog
	// channel index (common practice, no source).
	maxComtradeIndex = 4096
	// maxBufferLength bounds source.buffer_length, in scans (common
	// practice, no source: far beyond any IIO driver's buffer).
	maxBufferLength = 1 << 24
)

// decoder walks a yaml.Node tree along the schema. It records each key
// path's nodes so later checks can point at them.
type decoder struct {
	file  string
	root  *yaml.Node
	nodes map[string]*yaml.Node // value node by key path (null values are not recorded)
	keys  map[string]*yaml.Node // key node by key path
	dist  []Disturbance         // source.disturbances, moved to Config.Disturbances
}

func (d *decoder) errf(n *yaml.Node, key, format string, args ...any) *Error {
	e := &Error{File: d.file, Key: key, Msg: fmt.Sprintf(format, args...)}
	if n != nil {
		e.Line, e.Col = n.Line, n.Column
	}
	return e
}

// at returns the value node of key path p, else its key node (for an empty
// value), else the same for its nearest parent, else the document.
func (d *decoder) at(p string) *yaml.Node {
	for p != "" {
		if n := d.nodes[p]; n != nil {
			return n
		}
		if n := d.keys[p]; n != nil {
			return n
		}
		p = parentPath(p)
	}
	return d.root
}

// has reports whether key path p was given a non-null value.
func (d *decoder) has(p string) bool { return d.nodes[p] != nil }

// parentPath strips the last element of a key path: "a[2].b" → "a[2]" → "a".
func parentPath(p string) string {
	i := strings.LastIndexAny(p, ".[")
	if i < 0 {
		return ""
	}
	return p[:i]
}

func joinPath(p, k string) string {
	if p == "" {
		return k
	}
	return p + "." + k
}

// deref follows aliases to the anchored node.
func deref(n *yaml.Node) *yaml.Node {
	for i := 0; n != nil && n.Kind == yaml.AliasNode && i < 8; i++ {
		n = n.Alias
	}
	return n
}

func isNull(n *yaml.Node) bool {
	n = deref(n)
	return n == nil || (n.Kind == yaml.ScalarNode && n.ShortTag() == "!!null")
}

var yamlLine = regexp.MustCompile(`^yaml: line (\d+): (.*)$`)

// document parses data into its single YAML document.
func (d *decoder) document(data []byte) *Error {
	if len(data) > maxFileBytes {
		return &Error{File: d.file, Msg: "larger than 256 KiB; is this a config file?"}
	}
	dec := yaml.NewDecoder(bytes.NewReader(data))
	var doc yaml.Node
	if err := dec.Decode(&doc); err != nil {
		if errors.Is(err, io.EOF) {
			return &Error{File: d.file, Line: 1, Msg: "empty document: at least nominal and channels are required"}
		}
		return d.syntax(err)
	}
	var extra yaml.Node
	if err := dec.Decode(&extra); err == nil {
		return d.errf(&extra, "", "a second YAML document; a config file holds one")
	} else if !errors.Is(err, io.EOF) {
		return d.syntax(err)
	}
	d.root = &doc
	if doc.Kind == yaml.DocumentNode && len(doc.Content) == 1 {
		d.root = doc.Content[0]
	}
	if isNull(d.root) {
		return &Error{File: d.file, Line: 1, Msg: "empty document: at least nominal and channels are required"}
	}
	return nil
}

// syntax turns a yaml parse error into an *Error, keeping its line.
func (d *decoder) syntax(err error) *Error {
	msg := err.Error()
	if m := yamlLine.FindStringSubmatch(msg); m != nil {
		line, _ := strconv.Atoi(m[1])
		return &Error{File: d.file, Line: line, Msg: "YAML syntax: " + m[2]}
	}
	return &Error{File: d.file, Msg: "YAML syntax: " + strings.TrimPrefix(msg, "yaml: ")}
}

// mapping checks that n is a mapping whose keys are allowed in section,
// each at most once, and calls fn for each key with a non-null value.
func (d *decoder) mapping(n *yaml.Node, path, section string, fn func(key string, v *yaml.Node, kp string) *Error) *Error {
	allowed := sections[section]
	m := deref(n)
	if m == nil || m.Kind != yaml.MappingNode {
		return d.errf(n, path, "must be a mapping with keys %s", strings.Join(allowed, ", "))
	}
	seen := make(map[string]*yaml.Node, len(m.Content)/2)
	for i := 0; i+1 < len(m.Content); i += 2 {
		kn, v := m.Content[i], m.Content[i+1]
		k := deref(kn)
		if k == nil || k.Kind != yaml.ScalarNode {
			return d.errf(kn, path, "keys must be plain words; allowed here: %s", strings.Join(allowed, ", "))
		}
		name := k.Value
		kp := joinPath(path, name)
		if name == "<<" {
			return d.errf(kn, path, "merge keys (<<) are not supported; write the keys out")
		}
		if !slices.Contains(allowed, name) {
			return d.errf(kn, kp, "unknown key%s; allowed here: %s", suggest(name, allowed), strings.Join(allowed, ", "))
		}
		if prev := seen[name]; prev != nil {
			return d.errf(kn, kp, "given twice (first at line %d)", prev.Line)
		}
		seen[name] = kn
		d.keys[kp] = kn
		if isNull(v) {
			continue // an empty value is the same as a missing key: the default applies
		}
		d.nodes[kp] = v
		if e := fn(name, v, kp); e != nil {
			return e
		}
	}
	return nil
}

// sequence checks that n is a sequence of at most max items and calls fn
// for each item with its key path (path[i]).
func (d *decoder) sequence(n *yaml.Node, path, what string, max int, fn func(i int, v *yaml.Node, ip string) *Error) *Error {
	s := deref(n)
	if s == nil || s.Kind != yaml.SequenceNode {
		return d.errf(n, path, "must be a list of %s", what)
	}
	if len(s.Content) > max {
		return d.errf(n, path, "%d entries; at most %d are allowed", len(s.Content), max)
	}
	for i, v := range s.Content {
		ip := fmt.Sprintf("%s[%d]", path, i)
		d.nodes[ip] = v
		if e := fn(i, v, ip); e != nil {
			return e
		}
	}
	return nil
}

// suggest returns ` (did you mean "x"?)` for a near miss, else "".
func suggest(name string, allowed []string) string {
	best, dist := "", 3
	for _, a := range allowed {
		if dd := editDistance(strings.ToLower(name), a); dd < dist {
			best, dist = a, dd
		}
	}
	if best == "" {
		return ""
	}
	return fmt.Sprintf(" (did you mean %q?)", best)
}

// editDistance is the Levenshtein distance of two short strings, by runes.
func editDistance(a, b string) int {
	ra, rb := []rune(a), []rune(b)
	if len(ra) > 64 || len(rb) > 64 {
		return 64
	}
	prev := make([]int, len(rb)+1)
	cur := make([]int, len(rb)+1)
	for j := range prev {
		prev[j] = j
	}
	for i := 1; i <= len(ra); i++ {
		cur[0] = i
		for j := 1; j <= len(rb); j++ {
			cost := 1
			if ra[i-1] == rb[j-1] {
				cost = 0
			}
			cur[j] = min(prev[j]+1, cur[j-1]+1, prev[j-1]+cost)
		}
		prev, cur = cur, prev
	}
	return prev[len(rb)]
}

// scalar returns n's scalar node, or an error saying what was wanted.
func (d *decoder) scalar(n *yaml.Node, path, want string) (*yaml.Node, *Error) {
	s := deref(n)
	if s == nil || s.Kind != yaml.ScalarNode {
		return nil, d.errf(n, path, "must be %s, not a %s", want, kindName(s))
	}
	return s, nil
}

func kindName(n *yaml.Node) string {
	if n == nil {
		return "broken alias"
	}
	switch n.Kind {
	case yaml.MappingNode:
		return "mapping"
	case yaml.SequenceNode:
		return "list"
	}
	return "value of another kind"
}

// str decodes text. Any plain scalar is taken as written (so `site: 2024`
// is the text "2024"); binary and custom tags are refused.
func (d *decoder) str(n *yaml.Node, path string, dst *string) *Error {
	s, e := d.scalar(n, path, "text")
	if e != nil {
		return e
	}
	switch s.ShortTag() {
	case "!!str", "!!int", "!!float", "!!bool", "!!timestamp":
		*dst = s.Value
		return nil
	}
	return d.errf(n, path, "must be text, not %s", s.ShortTag())
}

// enum decodes text that must be one of allowed.
func (d *decoder) enum(n *yaml.Node, path string, dst *string, allowed ...string) *Error {
	var v string
	if e := d.str(n, path, &v); e != nil {
		return e
	}
	if !slices.Contains(allowed, v) {
		return d.errf(n, path, "%q is not allowed; use one of: %s", v, strings.Join(allowed, ", "))
	}
	*dst = v
	return nil
}

// float decodes a finite number.
func (d *decoder) float(n *yaml.Node, path string, dst *float64) *Error {
	s, e := d.scalar(n, path, "a number")
	if e != nil {
		return e
	}
	var f float64
	switch tag := s.ShortTag(); tag {
	case "!!int", "!!float":
		if err := s.Decode(&f); err != nil {
			return d.errf(n, path, "must be a number, not %q", s.Value)
		}
	default:
		return d.errf(n, path, "must be a number, not %q", s.Value)
	}
	if math.IsNaN(f) || math.IsInf(f, 0) {
		return d.errf(n, path, "must be a finite number, not %s", s.Value)
	}
	*dst = f
	return nil
}

// optFloat decodes a finite number into a new *float64.
func (d *decoder) optFloat(n *yaml.Node, path string, dst **float64) *Error {
	var f float64
	if e := d.float(n, path, &f); e != nil {
		return e
	}
	*dst = &f
	return nil
}

// integer decodes a whole number in [lo, hi] (hi fits an int on 32-bit).
func (d *decoder) integer(n *yaml.Node, path string, lo, hi int, dst *int) *Error {
	s, e := d.scalar(n, path, "a whole number")
	if e != nil {
		return e
	}
	var v int64
	if s.ShortTag() != "!!int" || s.Decode(&v) != nil {
		return d.errf(n, path, "must be a whole number from %d to %d, not %q", lo, hi, s.Value)
	}
	if v < int64(lo) || v > int64(hi) {
		return d.errf(n, path, "%d is out of range; allowed: %d to %d", v, lo, hi)
	}
	*dst = int(v)
	return nil
}

// duration decodes a Go duration string ("60s", "20m", "168h"), ≥ 0.
func (d *decoder) duration(n *yaml.Node, path string, dst *time.Duration) *Error {
	s, e := d.scalar(n, path, "a duration such as 30s, 20m or 168h")
	if e != nil {
		return e
	}
	if s.ShortTag() != "!!str" {
		return d.errf(n, path, "%q is not a duration: give a number with a unit, such as 30s, 20m or 168h", s.Value)
	}
	v, err := time.ParseDuration(s.Value)
	if err != nil {
		hint := ""
		if strings.HasSuffix(s.Value, "min") {
			hint = fmt.Sprintf(" (write %sm)", strings.TrimSuffix(s.Value, "min"))
		}
		return d.errf(n, path, "%q is not a duration%s; use units ms, s, m or h, such as 30s, 20m or 168h", s.Value, hint)
	}
	if v < 0 {
		return d.errf(n, path, "must not be negative")
	}
	*dst = v
	return nil
}

// decode fills c from the document, without cross-checks or defaults.
func (d *decoder) decode(c *Config) *Error {
	return d.mapping(d.root, "", "", func(k string, v *yaml.Node, p string) *Error {
		switch k {
		case "site":
			return d.str(v, p, &c.Site)
		case "gateway":
			return d.str(v, p, &c.Gateway)
		case "nominal":
			return d.nominal(v, p, &c.Nominal)
		case "wiring":
			return d.wiring(v, p, &c.Wiring)
		case "sample_rate_hz":
			return d.float(v, p, &c.SampleRateHz)
		case "reference":
			return d.str(v, p, &c.Reference)
		case "harmonics":
			return d.harmonics(v, p, &c.Harmonics)
		case "il_a":
			return d.float(v, p, &c.ILA)
		case "isc_a":
			return d.float(v, p, &c.IscA)
		case "lock_min_pct":
			return d.float(v, p, &c.LockMinPct)
		case "channels":
			return d.sequence(v, p, "channels", maxChannels, func(_ int, v *yaml.Node, ip string) *Error {
				ch := Channel{Line: v.Line, Scale: 1}
				if e := d.channel(v, ip, &ch); e != nil {
					return e
				}
				c.Channels = append(c.Channels, ch)
				return nil
			})
		case "source":
			c.Source.Line = v.Line
			return d.source(v, p, &c.Source)
		case "store":
			return d.store(v, p, &c.Store)
		case "mqtt":
			return d.mqtt(v, p, &c.MQTT)
		case "events":
			return d.events(v, p, &c.Events)
		case "modbus":
			return d.modbus(v, p, &c.Modbus)
		case "http":
			return d.http(v, p, &c.HTTP)
		case "demand":
			return d.demand(v, p, &c.Demand)
		case "circuits":
			return d.circuits(v, p, &c.Circuits)
		case "alarms":
			return d.sequence(v, p, "alarm rules", maxAlarms, func(_ int, v *yaml.Node, ip string) *Error {
				a := Alarm{Line: v.Line}
				if e := d.alarm(v, ip, &a); e != nil {
					return e
				}
				c.Alarms = append(c.Alarms, a)
				return nil
			})
		}
		return d.errf(v, p, "internal: key has no decoder")
	})
}

func (d *decoder) nominal(n *yaml.Node, path string, dst *Nominal) *Error {
	return d.mapping(n, path, "nominal", func(k string, v *yaml.Node, p string) *Error {
		switch k {
		case "frequency_hz":
			return d.float(v, p, &dst.FrequencyHz)
		case "voltage_v":
			return d.float(v, p, &dst.VoltageV)
		case "current_a":
			return d.float(v, p, &dst.CurrentA)
		}
		return d.errf(v, p, "internal: key has no decoder")
	})
}

func (d *decoder) wiring(n *yaml.Node, path string, dst *string) *Error {
	var w string
	if e := d.str(n, path, &w); e != nil {
		return e
	}
	switch w {
	case WiringSinglePhase, WiringWye, WiringDelta:
		*dst = w
		return nil
	}
	return d.errf(n, path, "%q is not allowed; use single-phase, wye or delta", w)
}

// maxOrder is the highest harmonic order computed (IEC 61000-4-7 and
// IEEE 519 sum orders 2 to 50).
const maxOrder = 50

func (d *decoder) harmonics(n *yaml.Node, path string, dst *Harmonics) *Error {
	const want = "all, or a list of orders from 2 to 50 such as [5, 7, 11, 13]"
	s := deref(n)
	if s == nil {
		return d.errf(n, path, "must be %s", want)
	}
	switch s.Kind {
	case yaml.ScalarNode:
		if s.ShortTag() != "!!str" || s.Value != "all" {
			return d.errf(n, path, "%q is not allowed; use %s", s.Value, want)
		}
		dst.All = true
		return nil
	case yaml.SequenceNode:
		dst.All = false
		dst.Orders = []int{1}
		seen := map[int]int{}
		return d.sequence(n, path, "orders", maxOrder+1, func(_ int, v *yaml.Node, ip string) *Error {
			s, e := d.scalar(v, ip, "a harmonic order")
			if e != nil {
				return e
			}
			var h int64
			if s.ShortTag() != "!!int" || s.Decode(&h) != nil {
				return d.errf(v, ip, "must be a whole number, a harmonic order from 2 to %d, not %q", maxOrder, s.Value)
			}
			if h < 1 || h > maxOrder {
				return d.errf(v, ip, "order %d is out of range; list orders from 2 to %d (1, the fundamental, is always computed)", h, maxOrder)
			}
			if line, dup := seen[int(h)]; dup {
				return d.errf(v, ip, "order %d is listed twice (first at line %d)", h, line)
			}
			seen[int(h)] = v.Line
			if h != 1 {
				dst.Orders = append(dst.Orders, int(h))
			}
			return nil
		})
	}
	return d.errf(n, path, "must be %s", want)
}

func (d *decoder) channel(n *yaml.Node, path string, ch *Channel) *Error {
	return d.mapping(n, path, "channels[]", func(k string, v *yaml.Node, p string) *Error {
		switch k {
		case "name":
			return d.str(v, p, &ch.Name)
		case "kind":
			return d.enum(v, p, &ch.Kind, KindVoltage, KindCurrent)
		case "phase":
			return d.enum(v, p, &ch.Phase, "a", "b", "c", "n", "ab", "bc", "ca", "ba", "cb", "ac")
		case "scale":
			return d.float(v, p, &ch.Scale)
		case "offset":
			return d.float(v, p, &ch.Offset)
		case "full_scale":
			return d.float(v, p, &ch.FullScale)
		case "delay_us":
			return d.float(v, p, &ch.DelayUS)
		case "comtrade":
			return d.integer(v, p, 1, maxComtradeIndex, &ch.Comtrade)
		case "iio":
			return d.str(v, p, &ch.IIO)
		}
		return d.errf(v, p, "internal: key has no decoder")
	})
}

func (d *decoder) source(n *yaml.Node, path string, s *Source) *Error {
	return d.mapping(n, path, "source", func(k string, v *yaml.Node, p string) *Error {
		switch k {
		case "kind":
			return d.enum(v, p, &s.Kind, SourceKinds()...)
		case "speed":
			return d.float(v, p, &s.Speed)
		case "path":
			return d.str(v, p, &s.Path)
		case "connect":
			return d.str(v, p, &s.Connect)
		case "format":
			return d.enum(v, p, &s.Format, PCMFormats()...)
		case "framing":
			return d.enum(v, p, &s.Framing, FramingRaw, FramingGLF1)
		case "disturbances":
			return d.disturbances(v, p, &d.dist)
		case "device":
			return d.str(v, p, &s.Device)
		case "sysfs":
			return d.str(v, p, &s.Sysfs)
		case "dev":
			return d.str(v, p, &s.Dev)
		case "buffer_length":
			return d.integer(v, p, 1, maxBufferLength, &s.BufferLength)
		}
		return d.errf(v, p, "internal: key has no decoder")
	})
}

func (d *decoder) store(n *yaml.Node, path string, s *Store) *Error {
	return d.mapping(n, path, "store", func(k string, v *yaml.Node, p string) *Error {
		switch k {
		case "path":
			return d.str(v, p, &s.Path)
		case "commit_every":
			return d.duration(v, p, &s.CommitEvery)
		case "max_size_mb":
			return d.integer(v, p, 1, maxStoreMB, &s.MaxSizeMB)
		case "on_damage":
			return d.enum(v, p, &s.OnDamage, OnDamageSetAside, OnDamageFail)
		case "retention":
			return d.mapping(v, p, "store.retention", func(k string, v *yaml.Node, p string) *Error {
				var r time.Duration
				if e := d.duration(v, p, &r); e != nil {
					return e
				}
				s.Retention[k] = r
				return nil
			})
		}
		return d.errf(v, p, "internal: key has no decoder")
	})
}

func (d *decoder) mqtt(n *yaml.Node, path string, m *MQTT) *Error {
	return d.mapping(n, path, "mqtt", func(k string, v *yaml.Node, p string) *Error {
		switch k {
		case "broker":
			return d.str(v, p, &m.Broker)
		case "listen":
			return d.str(v, p, &m.Listen)
		case "client_id":
			return d.str(v, p, &m.ClientID)
		case "username":
			return d.str(v, p, &m.Username)
		case "password_file":
			return d.str(v, p, &m.PasswordFile)
		case "password_env":
			return d.str(v, p, &m.PasswordEnv)
		case "tls":
			return d.mapping(v, p, "mqtt.tls", func(k string, v *yaml.Node, p string) *Error {
				switch k {
				case "ca":
					return d.str(v, p, &m.TLS.CA)
				case "cert":
					return d.str(v, p, &m.TLS.Cert)
				case "key":
					return d.str(v, p, &m.TLS.Key)
				}
				return d.errf(v, p, "internal: key has no decoder")
			})
		case "topic_prefix":
			return d.str(v, p, &m.TopicPrefix)
		case "telemetry_qos":
			if m.TelemetryQoS == nil {
				m.TelemetryQoS = map[string]int{}
			}
			return d.mapping(v, p, "mqtt.telemetry_qos", func(k string, v *yaml.Node, p string) *Error {
				var q int
				if e := d.integer(v, p, 0, 2, &q); e != nil {
					return e
				}
				m.TelemetryQoS[k] = q
				return nil
			})
		case "telemetry":
			return d.levels(v, p, &m.Telemetry)
		case "summary":
			return d.levels(v, p, &m.Summary)
		case "summary_circuits":
			m.SummaryCircuits = []string{}
			return d.sequence(v, p, "circuit names, such as [incomer, pump1]", maxCircuits, func(_ int, v *yaml.Node, ip string) *Error {
				var name string
				if e := d.str(v, ip, &name); e != nil {
					return e
				}
				m.SummaryCircuits = append(m.SummaryCircuits, name)
				return nil
			})
		}
		return d.errf(v, p, "internal: key has no decoder")
	})
}

// levels decodes a list of published interval labels (mqtt.telemetry,
// mqtt.summary) into *dst.
func (d *decoder) levels(v *yaml.Node, p string, dst *[]string) *Error {
	*dst = []string{}
	return d.sequence(v, p, "interval labels (3s, 10min, 2h), such as [10min]", len(telemetryLevels), func(_ int, v *yaml.Node, ip string) *Error {
		var l string
		if e := d.enum(v, ip, &l, telemetryLevels...); e != nil {
			return e
		}
		if slices.Contains(*dst, l) {
			return d.errf(v, ip, "%s is listed twice", l)
		}
		*dst = append(*dst, l)
		return nil
	})
}

// eventKinds decodes an event rule's kind: one word, or a list of them
// (checked against EventKinds by the validator, which knows the rule's
// name). KindPaths keeps each word's key path for its error.
func (d *decoder) eventKinds(v *yaml.Node, p string, a *Alarm) *Error {
	a.Kinds, a.kindPaths = []string{}, nil
	if n := deref(v); n != nil && n.Kind != yaml.SequenceNode {
		var k string
		if e := d.str(v, p, &k); e != nil {
			return e
		}
		a.Kinds, a.kindPaths = append(a.Kinds, k), append(a.kindPaths, p)
		return nil
	}
	return d.sequence(v, p, "event kinds ("+strings.Join(EventKinds, ", ")+")", len(EventKinds), func(_ int, v *yaml.Node, ip string) *Error {
		var k string
		if e := d.str(v, ip, &k); e != nil {
			return e
		}
		a.Kinds, a.kindPaths = append(a.Kinds, k), append(a.kindPaths, ip)
		return nil
	})
}

func (d *decoder) alarm(n *yaml.Node, path string, a *Alarm) *Error {
	return d.mapping(n, path, "alarms[]", func(k string, v *yaml.Node, p string) *Error {
		switch k {
		case "name":
			return d.str(v, p, &a.Name)
		case "circuit":
			return d.str(v, p, &a.Circuit)
		case "metric":
			return d.enum(v, p, &a.Metric, alarmMetricNames...)
		case "kind":
			return d.eventKinds(v, p, a)
		case "channel":
			return d.str(v, p, &a.Channel)
		case "phase":
			return d.enum(v, p, &a.Phase, "a", "b", "c", "total")
		case "level":
			return d.enum(v, p, &a.Level, alarmLevels...)
		case "severity":
			return d.enum(v, p, &a.Severity, "info", "warning", "critical")
		case "above":
			return d.optFloat(v, p, &a.Above)
		case "below":
			return d.optFloat(v, p, &a.Below)
		case "deadband":
			return d.float(v, p, &a.Deadband)
		case "on_delay":
			return d.duration(v, p, &a.OnDelay)
		case "off_delay":
			return d.duration(v, p, &a.OffDelay)
		case "min_load_pct":
			return d.float(v, p, &a.MinLoadPct)
		case "harmonic":
			return d.integer(v, p, 2, maxOrder, &a.Harmonic)
		case "relative_to":
			return d.enum(v, p, &a.RelativeTo, RelativeBaseline)
		case "learn":
			return d.duration(v, p, &a.Learn)
		}
		return d.errf(v, p, "internal: key has no decoder")
	})
}
