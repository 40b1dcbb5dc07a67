package config

import (
	"fmt"
	"math"
	"net/url"
	"path/filepath"
	"slices"
	"strings"
	"time"
	"unicode"

	"go.yaml.in/yaml/v3"

	"github.com/gridloupe/gridloupe/metrics/quantity"
)

// Read-only tables of allowed values.
var (
	// metricNames: what alarm rules may watch (metrics/quantity, defined there once).
	metricNames = quantity.AlarmMetrics()
	// alarmMetricNames: what the metric key accepts: the record metrics and event.
	alarmMetricNames = append(slices.Clip(metricNames), MetricEvent)
	alarmLevels      = []string{"200ms", "3s", "10min", "2h"} // DESIGN "Time": the closed set of interval labels
	telemetryLevels  = []string{"3s", "10min", "2h"}
)

// Defaults not visible in the struct literals below.
const (
	defaultSite        = "site"
	defaultLockMinPct  = 10
	defaultCommitEvery = 60 * time.Second
	defaultMaxSizeMB   = 1024
	defaultPrefix      = "gridloupe"
	defaultLevel       = "10min"
	defaultSeverity    = "warning"
	// maxStoreMB: bbolt maps the whole file; on 32-bit ARM its map limit is
	// just under 2 GiB (bbolt's maxMapSize for 32-bit targets).
	maxStoreMB = 2047
	// trackHighPct: the frequency tracker follows the line up to 115 % of
	// nominal, so orders to 50 reach 50·69 Hz at 60 Hz nominal (DESIGN,
	// "Performance notes": fs above 6.9 kHz).
	trackHighPct = 115
	// maxRateHz: no input this targets samples faster (common practice, no source).
	maxRateHz = 1e6
)

func defaultRetention() map[string]time.Duration {
	return map[string]time.Duration{"3s": 168 * time.Hour, "10min": 9600 * time.Hour, "2h": 87600 * time.Hour}
}

// parse decodes, fills defaults and validates. hostname supplies the
// default gateway name.
func parse(path string, data []byte, hostname func() (string, error)) (*Config, *Error) {
	d := &decoder{file: path, nodes: map[string]*yaml.Node{}, keys: map[string]*yaml.Node{}}
	if e := d.document(data); e != nil {
		return nil, e
	}
	c := &Config{
		Path:       path,
		Site:       defaultSite,
		Wiring:     WiringWye,
		Harmonics:  Harmonics{All: true},
		LockMinPct: defaultLockMinPct,
		Store:      Store{CommitEvery: defaultCommitEvery, MaxSizeMB: defaultMaxSizeMB, Retention: defaultRetention(), OnDamage: OnDamageSetAside},
		MQTT:       MQTT{TopicPrefix: defaultPrefix, Telemetry: []string{defaultLevel}, TelemetryQoS: defaultTelemetryQoS(), Summary: []string{defaultLevel}},
		Modbus:     Modbus{Listen: defaultModbusListen, UnitID: 1, WordOrder: WordHighFirst},
		HTTP:       HTTP{Listen: defaultHTTPListen},
		Demand:     Demand{Interval: defaultDemand, Method: DemandFixed},
		Events:     defaultEvents(),
	}
	if e := d.decode(c); e != nil {
		return nil, e
	}
	v := validator{decoder: d, c: c}
	for _, check := range []func() *Error{v.names, v.nominal, v.scalars, v.channels, v.circuitsCheck, v.reference, v.rate, v.source, v.store, v.mqtt, v.alarms, v.integration, v.events} {
		if e := check(); e != nil {
			return nil, e
		}
	}
	if !d.has("gateway") {
		if e := v.hostGateway(hostname); e != nil {
			return nil, e
		}
	}
	if c.MQTT.ClientID == "" {
		c.MQTT.ClientID = c.Gateway
	}
	v.topicBase()
	return c, nil
}

type validator struct {
	*decoder
	c         *Config
	siteLevel string
}

// fail reports a problem at key path p (or its nearest given parent).
func (v *validator) fail(p, format string, args ...any) *Error {
	return v.errf(v.at(p), p, format, args...)
}

func (v *validator) level(p, name string) (string, *Error) {
	s, why := sanitize(name)
	if why != "" {
		return "", v.fail(p, "%s; it becomes an MQTT topic level", why)
	}
	return s, nil
}

func (v *validator) names() *Error {
	var e *Error
	if v.siteLevel, e = v.level("site", v.c.Site); e != nil {
		return e
	}
	if v.has("gateway") {
		if _, e := v.level("gateway", v.c.Gateway); e != nil {
			return e
		}
	}
	return nil
}

func (v *validator) hostGateway(hostname func() (string, error)) *Error {
	h, err := hostname()
	if err != nil {
		return v.fail("gateway", "not set, and the host name cannot be read (%v); set gateway", err)
	}
	if _, why := sanitize(h); why != "" {
		return v.fail("gateway", "not set, and the host name %q %s as an MQTT topic level; set gateway", h, why)
	}
	v.c.Gateway = h
	return nil
}

func (v *validator) topicBase() {
	g, _ := sanitize(v.c.Gateway) // checked in names or hostGateway
	v.c.MQTT.Base = v.c.MQTT.TopicPrefix + "/" + v.siteLevel + "/" + g
}

func (v *validator) nominal() *Error {
	n := &v.c.Nominal
	switch {
	case !v.has("nominal"):
		return v.fail("nominal", "required: frequency_hz (50 or 60) and voltage_v")
	case !v.has("nominal.frequency_hz"):
		return v.fail("nominal.frequency_hz", "required: 50 or 60")
	case n.FrequencyHz != 50 && n.FrequencyHz != 60:
		return v.fail("nominal.frequency_hz", "%g Hz is not allowed; use 50 or 60", n.FrequencyHz)
	case !v.has("nominal.voltage_v"):
		return v.fail("nominal.voltage_v", "required: the declared voltage in V (phase-to-neutral for wye and single-phase), such as 230")
	case n.VoltageV <= 0:
		return v.fail("nominal.voltage_v", "must be more than 0 V")
	case n.CurrentA < 0:
		return v.fail("nominal.current_a", "must not be negative (0 = unset)")
	}
	return nil
}

func (v *validator) scalars() *Error {
	c := v.c
	switch {
	case c.SampleRateHz < 0:
		return v.fail("sample_rate_hz", "must not be negative (0 = from the input)")
	case c.ILA < 0:
		return v.fail("il_a", "must not be negative (0 = unset)")
	case c.IscA < 0:
		return v.fail("isc_a", "must not be negative (0 = unset)")
	case c.LockMinPct <= 0 || c.LockMinPct >= 100:
		return v.fail("lock_min_pct", "%g is out of range; allowed: more than 0 and less than 100 (percent of the nominal voltage)", c.LockMinPct)
	}
	if c.Harmonics.All {
		c.Harmonics.Orders = make([]int, maxOrder)
		for i := range c.Harmonics.Orders {
			c.Harmonics.Orders[i] = i + 1
		}
	} else {
		slices.Sort(c.Harmonics.Orders)
	}
	return nil
}

func (v *validator) channels() *Error {
	c := v.c
	if len(c.Channels) == 0 {
		return v.fail("channels", "no channels; at least one voltage channel is required, such as {name: va, kind: voltage, phase: a}")
	}
	names := map[string]int{}  // name → index
	levels := map[string]int{} // topic level → index
	var vIdx, iIdx [4]int      // per phase a, b, c, n: index+1 of the voltage / current channel
	var lines, currents [3]int // delta: per line ab, bc, ca and per phase a, b, c: index+1
	for i := range c.Channels {
		ch := &c.Channels[i]
		p := fmt.Sprintf("channels[%d]", i)
		switch {
		case !v.has(p + ".name"):
			return v.fail(p+".name", "required: a unique name, matched to the CSV column")
		case strings.IndexFunc(ch.Name, func(r rune) bool { return r == ',' || unicode.IsSpace(r) }) >= 0:
			return v.fail(p+".name", "%q must not contain commas or white space (it is a CSV column name)", ch.Name)
		}
		if j, dup := names[ch.Name]; dup {
			return v.fail(p+".name", "%q is used twice (first at line %d)", ch.Name, c.Channels[j].Line)
		}
		names[ch.Name] = i
		var e *Error
		if ch.Level, e = v.level(p+".name", ch.Name); e != nil {
			return e
		}
		if j, dup := levels[ch.Level]; dup {
			return v.fail(p+".name", "%q and %q (line %d) both become the MQTT topic level %q; rename one", ch.Name, c.Channels[j].Name, c.Channels[j].Line, ch.Level)
		}
		levels[ch.Level] = i
		switch {
		case !v.has(p + ".kind"):
			return v.fail(p+".kind", "required: voltage or current")
		case !v.has(p + ".phase"):
			return v.fail(p+".phase", "required: a, b or c (or n for a neutral current)")
		case ch.Kind == KindVoltage && ch.Phase == "n":
			return v.fail(p+".phase", "a voltage channel is on phase a, b or c (measured to neutral); n is for a neutral current")
		case ch.Scale == 0:
			return v.fail(p+".scale", "must not be 0 (engineering value = raw·scale + offset)")
		case ch.FullScale < 0:
			return v.fail(p+".full_scale", "must not be negative (0 = no clipping check)")
		case math.Abs(ch.DelayUS) >= 1e6/c.Nominal.FrequencyHz:
			return v.fail(p+".delay_us", "%g µs is a cycle or more at %g Hz; a correction that large is a wiring or channel-order mistake", ch.DelayUS, c.Nominal.FrequencyHz)
		}
		if c.Wiring == WiringDelta {
			if e := v.deltaChannel(p, i, &lines, &currents); e != nil {
				return e
			}
			continue
		}
		if len(ch.Phase) == 2 {
			return v.fail(p+".phase", "%s is a line-to-line voltage, for wiring: delta; on %s use a, b or c (measured to neutral)", ch.Phase, c.Wiring)
		}
		ph := strings.IndexByte("abcn", ch.Phase[0])
		slot := &vIdx[ph]
		if ch.Kind == KindCurrent {
			slot = &iIdx[ph]
		}
		if *slot != 0 && ch.Kind == KindCurrent && len(c.Circuits) > 0 {
			continue // circuits each have their own phases (circuitsCheck)
		}
		if *slot != 0 {
			return v.fail(p+".phase", "a second %s channel on phase %s (first: %s, line %d); one per phase", ch.Kind, ch.Phase, c.Channels[*slot-1].Name, c.Channels[*slot-1].Line)
		}
		*slot = i + 1
	}
	if c.Wiring == WiringDelta {
		if len(c.Circuits) > 0 {
			return v.deltaHookup(lines, [3]int{}) // circuitsCheck judges each circuit's CTs
		}
		return v.deltaHookup(lines, currents)
	}
	nv := 0
	for _, x := range vIdx {
		if x != 0 {
			nv++
		}
	}
	if nv == 0 {
		return v.fail("channels", "no voltage channel; at least one is required (the angle and frequency reference)")
	}
	if c.Wiring == WiringSinglePhase {
		if nv != 1 || vIdx[0] == 0 {
			return v.fail("wiring", "single-phase needs exactly one voltage channel, on phase a")
		}
		for ph, x := range iIdx[1:3] {
			if x != 0 {
				return v.fail(fmt.Sprintf("channels[%d].phase", x-1), "single-phase has currents on phase a (and n) only, not %c", "bc"[ph])
			}
		}
		return nil
	}
	for ph, x := range iIdx[:3] {
		if x != 0 && vIdx[ph] == 0 {
			return v.fail(fmt.Sprintf("channels[%d].phase", x-1), "current %s is on phase %c, which has no voltage channel: a phase with a current but no voltage leaves P, Q and the wye totals undefined; add a voltage on phase %c", c.Channels[x-1].Name, "abc"[ph], "abc"[ph])
		}
	}
	return nil
}

func (v *validator) voltageNames() string {
	var s []string
	for _, i := range v.c.VoltageChannels() {
		s = append(s, v.c.Channels[i].Name)
	}
	return strings.Join(s, ", ")
}

func (v *validator) reference() *Error {
	c := v.c
	if !v.has("reference") {
		c.Reference = c.Channels[c.VoltageChannels()[0]].Name
		return nil
	}
	i := c.ChannelIndex(c.Reference)
	switch {
	case i < 0:
		return v.fail("reference", "no channel is named %q; the reference is a voltage channel: %s", c.Reference, v.voltageNames())
	case c.Channels[i].Kind != KindVoltage:
		return v.fail("reference", "%q is a current channel; the reference is a voltage channel: %s", c.Reference, v.voltageNames())
	}
	return nil
}

func minRate(order int, f float64) float64 { return float64(2*order*trackHighPct) * f / 100 }

// rateProblem says why fs cannot carry the computed orders, or "".
func rateProblem(fs float64, h Harmonics, f float64) string {
	if math.IsNaN(fs) || fs <= 0 || fs > maxRateHz {
		return fmt.Sprintf("%g Hz is out of range; allowed: more than 0 and at most %g Hz", fs, maxRateHz)
	}
	need := minRate(h.MaxOrder(), f)
	if fs > need {
		return ""
	}
	which := "harmonics: all computes orders up to 50"
	fix := "raise the sample rate, or list fewer orders under harmonics"
	if !h.All {
		which = fmt.Sprintf("the highest listed order is %d", h.MaxOrder())
		fix = "raise the sample rate, or list lower orders"
	}
	return fmt.Sprintf("%g Hz is too low: %s, and at up to %d %% of the nominal %g Hz order %d lies at %g Hz, so sampling must exceed twice that, %g Hz; %s (and filter the inputs against aliasing)",
		fs, which, trackHighPct, f, h.MaxOrder(), need/2, need, fix)
}

func (v *validator) rate() *Error {
	if v.c.SampleRateHz == 0 {
		return nil
	}
	if msg := rateProblem(v.c.SampleRateHz, v.c.Harmonics, v.c.Nominal.FrequencyHz); msg != "" {
		return v.fail("sample_rate_hz", "%s", msg)
	}
	return nil
}

// resolve anchors a relative path at the config file's folder.
func (v *validator) resolve(p *string) {
	if *p != "" && !filepath.IsAbs(*p) {
		*p = filepath.Join(filepath.Dir(v.c.Path), *p)
	}
}

func (v *validator) source() *Error {
	s := &v.c.Source
	if !v.has("source") {
		return nil
	}
	kinds := strings.Join(SourceKinds(), ", ")
	switch {
	case !v.has("source.kind"):
		return v.fail("source.kind", "required: %s", kinds)
	case s.Kind == SourceSim && v.has("source.path"):
		return v.fail("source.path", "applies to kinds csv, wav, pcm and comtrade, not sim")
	case s.Kind != SourceSim && v.has("source.speed"):
		return v.fail("source.speed", "applies to kind sim only")
	case s.Speed < 0:
		return v.fail("source.speed", "must not be negative (1 = real time, 0 = as fast as possible)")
	}
	if e := v.disturbances(); e != nil {
		return e
	}
	if e := v.pcmSource(); e != nil {
		return e
	}
	if e := v.iioSource(); e != nil {
		return e
	}
	if s.Kind != SourceSim && s.Kind != SourcePCM && s.Kind != SourceIIO && s.Path == "" {
		return v.fail("source.path", "required for kind %s: the recording to read", s.Kind)
	}
	if s.Kind == SourceSim && !v.has("source.speed") {
		s.Speed = 1
	}
	if s.Path != "-" {
		v.resolve(&s.Path)
	}
	return nil
}

// iioSource checks the keys of an iio source (DESIGN "Sources": IIO).
func (v *validator) iioSource() *Error {
	s := &v.c.Source
	if s.Kind != SourceIIO {
		for _, k := range []string{"device", "sysfs", "dev", "buffer_length"} {
			if v.has("source." + k) {
				return v.fail("source."+k, "applies to kind iio only")
			}
		}
		return nil
	}
	switch {
	case v.has("source.path"):
		return v.fail("source.path", "does not apply to kind iio: name the device with source.device")
	case s.Device == "":
		return v.fail("source.device", "required for kind iio: the device directory (iio:device0) or its name attribute")
	}
	for i, ch := range v.c.Channels {
		if ch.IIO == "" {
			return v.fail(fmt.Sprintf("channels[%d]", i), "channel %q needs iio: the scan element it reads (e.g. voltage0)", ch.Name)
		}
	}
	if s.Sysfs == "" {
		s.Sysfs = "/sys/bus/iio/devices"
	}
	if s.Dev == "" {
		s.Dev = "/dev"
	}
	v.resolve(&s.Sysfs)
	v.resolve(&s.Dev)
	return nil
}

// pcmSource checks the keys of a pcm source (DESIGN "Sources": raw PCM).
func (v *validator) pcmSource() *Error {
	s := &v.c.Source
	if s.Kind != SourcePCM {
		for _, k := range []string{"connect", "format", "framing"} {
			if v.has("source." + k) {
				return v.fail("source."+k, "applies to kind pcm only")
			}
		}
		return nil
	}
	switch {
	case s.Path != "" && s.Connect != "":
		return v.fail("source.connect", "set path (a file, a FIFO or \"-\" for standard input) or connect (host:port), not both")
	case s.Path == "" && s.Connect == "":
		return v.fail("source.path", "required for kind pcm: a file, a FIFO or \"-\" for standard input (or connect: host:port)")
	case s.Format == "":
		return v.fail("source.format", "required for kind pcm: one of %s", strings.Join(PCMFormats(), ", "))
	case v.c.SampleRateHz == 0:
		return v.fail("source", "kind pcm needs sample_rate_hz: a raw stream carries no sample rate")
	}
	if s.Connect != "" {
		if _, _, err := splitHostPort(s.Connect); err != nil {
			return v.fail("source.connect", "%q is not host:port (e.g. 127.0.0.1:7001): %v", s.Connect, err)
		}
	}
	if s.Framing == "" {
		s.Framing = FramingRaw
	}
	if s.Framing == FramingGLF1 && len(v.c.Channels) > 16 {
		return v.fail("source.framing", "a GLF1 frame carries 1 to 16 channels, the configuration has %d", len(v.c.Channels))
	}
	return nil
}

// defaultTelemetryQoS is QoS 1 for every level: a message is deleted from
// the outbox only once the broker acknowledged it.
func defaultTelemetryQoS() map[string]int {
	return map[string]int{"3s": 1, "10min": 1, "2h": 1}
}

func (v *validator) store() *Error {
	s := &v.c.Store
	if s.CommitEvery <= 0 {
		return v.fail("store.commit_every", "must be more than 0, such as 60s")
	}
	for _, k := range sections["store.retention"] {
		if s.Retention[k] <= 0 {
			return v.fail("store.retention."+k, "must be more than 0, such as 168h")
		}
	}
	v.resolve(&s.Path)
	return nil
}

func (v *validator) mqtt() *Error {
	m := &v.c.MQTT
	if e := v.broker(); e != nil {
		return e
	}
	if e := v.summaryCircuits(); e != nil {
		return e
	}
	if m.Listen != "" {
		host, port, err := splitHostPort(m.Listen)
		switch {
		case m.Broker != BrokerEmbedded:
			return v.fail("mqtt.listen", "applies only with broker: embedded")
		case err != nil || port == "":
			return v.fail("mqtt.listen", "%q is not host:port, such as 127.0.0.1:1883", m.Listen)
		case !isLoopbackIP(host) && host != "localhost" &&
			(m.TLS.Cert == "" || m.Username == "" || (m.PasswordFile == "" && m.PasswordEnv == "")):
			return v.fail("mqtt.listen", "%q is beyond loopback: the embedded broker then needs tls.cert/tls.key, username and a password", m.Listen)
		}
	}
	switch {
	case v.has("mqtt.client_id") && m.ClientID == "":
		return v.fail("mqtt.client_id", "must not be empty (leave the key out to use the gateway name)")
	case m.PasswordFile != "" && m.PasswordEnv != "":
		return v.fail("mqtt.password_env", "set password_file or password_env, not both")
	case strings.ContainsAny(m.PasswordEnv, "=\x00"):
		return v.fail("mqtt.password_env", "is not a valid environment variable name")
	case (m.PasswordFile != "" || m.PasswordEnv != "") && m.Username == "":
		return v.fail("mqtt.username", "required when a password is set (MQTT 3.1.1 §3.1.2.9: no password without a user name)")
	case m.TLS.Cert != "" && m.TLS.Key == "":
		return v.fail("mqtt.tls.key", "required with tls.cert: the client certificate's private key")
	case m.TLS.Key != "" && m.TLS.Cert == "":
		return v.fail("mqtt.tls.cert", "required with tls.key: the client certificate")
	case (m.TLS != TLS{}) && strings.HasPrefix(m.Broker, "tcp://"):
		return v.fail("mqtt.tls", "applies to ssl:// brokers; the broker is tcp://")
	}
	for l := range strings.SplitSeq(m.TopicPrefix, "/") {
		s, why := sanitize(l)
		switch {
		case l == "":
			return v.fail("mqtt.topic_prefix", "%q has an empty level (a leading, trailing or double /)", m.TopicPrefix)
		case why != "":
			return v.fail("mqtt.topic_prefix", "level %q %s", l, why)
		case s != l:
			return v.fail("mqtt.topic_prefix", "level %q must not contain + or # or start with $ (MQTT 3.1.1 §4.7)", l)
		}
	}
	for _, p := range []*string{&m.PasswordFile, &m.TLS.CA, &m.TLS.Cert, &m.TLS.Key} {
		v.resolve(p)
	}
	return nil
}

// broker checks mqtt.broker. It never repeats a broker URL that holds
// user information, which may be a password.
func (v *validator) broker() *Error {
	b := v.c.MQTT.Broker
	if b == "" || b == BrokerEmbedded {
		return nil
	}
	const allowed = `"" (off), tcp://host:port, ssl://host:port or embedded`
	u, err := url.Parse(b)
	switch {
	case err != nil:
		return v.fail("mqtt.broker", "is not a URL; use %s", allowed)
	case u.User != nil:
		return v.fail("mqtt.broker", "must not hold a user name or password; use username and password_file or password_env")
	case u.Scheme != "tcp" && u.Scheme != "ssl":
		return v.fail("mqtt.broker", "%q is not allowed; use %s", b, allowed)
	case u.Hostname() == "" || u.Port() == "":
		return v.fail("mqtt.broker", "%q needs a host and a port, such as %s://127.0.0.1:1883", b, u.Scheme)
	case (u.Path != "" && u.Path != "/") || u.RawQuery != "" || u.Fragment != "":
		return v.fail("mqtt.broker", "%q must be scheme://host:port only", b)
	}
	return nil
}

func (v *validator) alarms() *Error {
	names := map[string]int{}
	for i := range v.c.Alarms {
		a := &v.c.Alarms[i]
		p := fmt.Sprintf("alarms[%d]", i)
		switch {
		case !v.has(p + ".name"):
			return v.fail(p+".name", "required: a unique name for the rule")
		case strings.IndexFunc(a.Name, unicode.IsControl) >= 0:
			return v.fail(p+".name", "must not contain control characters")
		case !v.has(p + ".metric"):
			return v.fail(p+".metric", "required: one of %s", strings.Join(alarmMetricNames, ", "))
		}
		if j, dup := names[a.Name]; dup {
			return v.fail(p+".name", "%q is used twice (first at line %d)", a.Name, v.c.Alarms[j].Line)
		}
		names[a.Name] = i
		if a.Metric == MetricEvent {
			if e := v.eventAlarm(p, a); e != nil {
				return e
			}
			continue
		}
		if v.has(p + ".kind") {
			return v.fail(p+".kind", "rule %q: kind applies to metric: event only (the voltage event kinds %s)", a.Name, strings.Join(EventKinds, ", "))
		}
		if a.Level == "" {
			a.Level = defaultLevel
		}
		if a.Severity == "" {
			a.Severity = defaultSeverity
		}
		if e := v.alarm(p, a); e != nil {
			return e
		}
	}
	return nil
}

// eventAllowed are the keys of an event rule.
var eventAllowed = []string{"name", "metric", "kind", "channel", "on_delay", "off_delay", "severity"}

// defaultEventOffDelay is how long an event rule stays raised after the
// last event ended when off_delay is not given: long enough for the
// operator to notice a dip of a fraction of a second, and for the drive
// restarts that follow it (common practice, no source).
const defaultEventOffDelay = 10 * time.Minute

// eventAlarm checks a rule on metric event and fills its defaults.
func (v *validator) eventAlarm(p string, a *Alarm) *Error {
	for _, k := range sections["alarms[]"] {
		if !slices.Contains(eventAllowed, k) && v.has(p+"."+k) {
			return v.fail(p+"."+k, "rule %q: %s does not apply to metric: event (the events section sets the thresholds); allowed keys: %s",
				a.Name, k, strings.Join(eventAllowed, ", "))
		}
	}
	for i, k := range a.Kinds {
		kp := p + ".kind"
		if i < len(a.kindPaths) {
			kp = a.kindPaths[i]
		}
		switch {
		case !slices.Contains(EventKinds, k):
			return v.fail(kp, "rule %q: kind %q is not allowed; use one of: %s (or a list of them; leave kind out for every kind)", a.Name, k, strings.Join(EventKinds, ", "))
		case slices.Contains(a.Kinds[:i], k):
			return v.fail(kp, "rule %q: kind %s is listed twice", a.Name, k)
		}
	}
	a.kindPaths = nil
	if a.Severity == "" {
		a.Severity = defaultSeverity
	}
	if !v.has(p + ".off_delay") {
		a.OffDelay = defaultEventOffDelay
	}
	if v.has(p + ".channel") {
		i := v.c.ChannelIndex(a.Channel)
		switch {
		case i < 0:
			return v.fail(p+".channel", "rule %q: no channel is named %q; allowed: a voltage channel (%s), or leave channel out to watch every one",
				a.Name, a.Channel, v.voltageNames())
		case v.c.Channels[i].Kind != KindVoltage:
			return v.fail(p+".channel", "rule %q: %q is a %s channel; voltage events are on voltage channels (%s)",
				a.Name, a.Channel, v.c.Channels[i].Kind, v.voltageNames())
		}
	}
	return nil
}

func (v *validator) alarm(p string, a *Alarm) *Error {
	c := v.c
	var ch *Channel // the rule's channel, for per-channel metrics
	switch {
	case slices.Contains(quantity.AlarmChannelNames(), a.Metric) || a.Metric == "pct" || a.Metric == "pct_il":
		if v.has(p + ".circuit") {
			return v.fail(p+".circuit", "applies to pf and dpf; %s is per channel, and the channel names its circuit", a.Metric)
		}
		if v.has(p + ".phase") {
			return v.fail(p+".phase", "applies to pf and dpf; %s is per channel: set channel", a.Metric)
		}
		if !v.has(p + ".channel") {
			return v.fail(p+".channel", "required for %s: one of the configured channels", a.Metric)
		}
		i := c.ChannelIndex(a.Channel)
		if i < 0 {
			return v.fail(p+".channel", "no channel is named %q", a.Channel)
		}
		ch = &c.Channels[i]
	case slices.Contains(quantity.AlarmPhaseNames(), a.Metric):
		if v.has(p + ".channel") {
			return v.fail(p+".channel", "%s is per phase: set phase (a, b, c or total), not channel", a.Metric)
		}
		if e := v.alarmCircuit(p, a); e != nil {
			return e
		}
		if a.Phase == "" {
			a.Phase = "total"
		}
		if e := v.pfPhase(p, a); e != nil {
			return e
		}
	default: // freq_hz and unbalance
		keys := []string{"channel", "phase", "circuit"}
		if a.Metric == "unbalance_current_pct" && len(c.Circuits) > 0 {
			if e := v.alarmCircuit(p, a); e != nil {
				return e
			}
			keys = keys[:2] // with circuits, each has its own phase currents
		}
		for _, k := range keys {
			if v.has(p + "." + k) {
				return v.fail(p+"."+k, "does not apply to %s (a system-wide value)", a.Metric)
			}
		}
		if e := v.unbalance(p, a); e != nil {
			return e
		}
	}
	isPct := a.Metric == "pct" || a.Metric == "pct_il"
	switch {
	case strings.Contains(a.Metric, "_h50_") && !c.Harmonics.All:
		return v.fail(p+".metric", "%s sums orders 2 to 50 and needs harmonics: all (a list computes only the listed orders); use %s or set harmonics: all", a.Metric, strings.Replace(a.Metric, "_h50", "", 1))
	case (strings.HasPrefix(a.Metric, "tdd") || a.Metric == "pct_il") && ch.Kind != KindCurrent:
		return v.fail(p+".channel", "%s is for current channels; %q is a voltage channel", a.Metric, ch.Name)
	case (strings.HasPrefix(a.Metric, "tdd") || a.Metric == "pct_il") && c.ChannelIL(ch.Name) == 0:
		return v.fail(p+".metric", "%s is relative to IL: set il_a, the maximum demand load current (IEEE 519)", a.Metric)
	case isPct && !v.has(p+".harmonic"):
		return v.fail(p+".harmonic", "required for %s: the order, 2 to 50", a.Metric)
	case isPct && !c.Harmonics.Has(a.Harmonic):
		return v.fail(p+".harmonic", "order %d is not computed; add it to harmonics or use harmonics: all", a.Harmonic)
	case !isPct && v.has(p+".harmonic"):
		return v.fail(p+".harmonic", "applies to metrics pct and pct_il only")
	}
	if e := v.relative(p, a); e != nil {
		return e
	}
	return v.threshold(p, a, ch)
}

// defaultLearn is a baseline rule's commissioning period: a week, so every
// load of the weekly cycle is seen (common practice, no source).
const defaultLearn = 168 * time.Hour

// relative checks the baseline keys of alarm a.
func (v *validator) relative(p string, a *Alarm) *Error {
	if a.RelativeTo == "" {
		if v.has(p + ".learn") {
			return v.fail(p+".learn", "applies to relative_to: baseline rules only")
		}
		return nil
	}
	if a.Learn == 0 {
		a.Learn = defaultLearn
	}
	if a.Learn < 0 {
		return v.fail(p+".learn", "must be a positive duration, e.g. 168h")
	}
	if a.Above != nil && *a.Above < 0 || a.Below != nil && *a.Below < 0 {
		return v.fail(p+".metric", "with relative_to: baseline, above/below are the rise/drop from the baseline: give a positive amount")
	}
	c := v.c
	if c.ILA == 0 && c.Nominal.CurrentA == 0 {
		full := false
		for _, ch := range c.Channels {
			full = full || ch.Kind == KindCurrent && ch.FullScale > 0
		}
		if !full {
			return v.fail(p+".relative_to", "the baseline's load bins are percentages of IL: set il_a (or nominal.current_a, or full_scale on the current channels)")
		}
	}
	return nil
}

func (v *validator) pfPhase(p string, a *Alarm) *Error {
	c := v.c
	hasPair := func(ph string) bool {
		var hv, hi bool
		for _, ch := range c.Channels {
			if ch.Phase == ph {
				hv = hv || ch.Kind == KindVoltage
				hi = hi || ch.Kind == KindCurrent
			}
		}
		return hv && hi
	}
	if c.Wiring == WiringDelta {
		if a.Phase != "total" {
			return v.fail(p+".phase", "delta has no per-phase %s (no phase-to-neutral voltages); use phase: total", a.Metric)
		}
		if len(c.CurrentChannels()) < 2 {
			return v.fail(p+".metric", "%s needs two or three current channels on delta", a.Metric)
		}
		return nil
	}
	if len(c.Circuits) > 0 {
		return v.circuitPhase(p, a)
	}
	if a.Phase == "total" {
		if !hasPair("a") && !hasPair("b") && !hasPair("c") {
			return v.fail(p+".metric", "%s needs a phase with both a voltage and a current channel", a.Metric)
		}
		return nil
	}
	if !hasPair(a.Phase) {
		return v.fail(p+".phase", "phase %s has no voltage and current pair, so no %s", a.Phase, a.Metric)
	}
	return nil
}

func (v *validator) unbalance(p string, a *Alarm) *Error {
	metric := a.Metric
	kind, ok := strings.CutPrefix(metric, "unbalance_")
	if !ok {
		return nil
	}
	kind = strings.TrimSuffix(kind, "_pct")
	// the channels whose unbalance is watched: a circuit's currents, or
	// every channel of the kind
	chans, of := v.c.Channels, ""
	if a.Circuit != "" {
		chans, of = nil, " in circuit "+a.Circuit
		for _, ci := range v.c.Circuits {
			if ci.Name == a.Circuit {
				for _, name := range ci.Currents {
					if k := v.c.ChannelIndex(name); k >= 0 {
						chans = append(chans, v.c.Channels[k])
					}
				}
			}
		}
	}
	if v.c.Wiring == WiringDelta {
		return v.deltaUnbalance(p, metric, kind, chans, of)
	}
	if v.c.Wiring != WiringWye {
		return v.fail(p+".metric", "%s needs wiring: wye or delta", metric)
	}
	for _, ph := range []string{"a", "b", "c"} {
		if !slices.ContainsFunc(chans, func(ch Channel) bool { return ch.Kind == kind && ch.Phase == ph }) {
			return v.fail(p+".metric", "%s needs %s channels on phases a, b and c%s; phase %s has none", metric, kind, of, ph)
		}
	}
	return nil
}

func (v *validator) threshold(p string, a *Alarm, ch *Channel) *Error {
	c := v.c
	var t float64
	tp := p + ".above"
	switch {
	case a.Above != nil && a.Below != nil:
		return v.fail(p+".below", "set exactly one of above or below, not both")
	case a.Above == nil && a.Below == nil:
		return v.fail(p, "set exactly one of above or below: the threshold in the metric's units")
	case a.Above != nil:
		t = *a.Above
	default:
		t, tp = *a.Below, p+".below"
	}
	switch a.Metric {
	case "pf", "dpf":
		if t < -1 || t > 1 {
			return v.fail(tp, "%g is out of range for %s; allowed: -1 to 1", t, a.Metric)
		}
	case "freq_hz":
		if t <= 0 {
			return v.fail(tp, "must be more than 0 Hz")
		}
	default:
		if t < 0 {
			return v.fail(tp, "must not be negative for %s", a.Metric)
		}
	}
	switch {
	case a.Deadband < 0:
		return v.fail(p+".deadband", "must not be negative (metric units)")
	case a.MinLoadPct < 0 || a.MinLoadPct > 100:
		return v.fail(p+".min_load_pct", "%g is out of range; allowed: 0 to 100 (percent of IL or of the current channel's full scale)", a.MinLoadPct)
	case a.MinLoadPct == 0:
		return nil
	}
	// min_load_pct needs a current and a base for it.
	var currents []*Channel
	switch {
	case ch != nil && ch.Kind == KindCurrent:
		currents = []*Channel{ch}
	case a.Metric == "pf" || a.Metric == "dpf":
		for i := range c.Channels {
			x := &c.Channels[i]
			if x.Kind == KindCurrent && x.Phase != "n" && (a.Phase == "total" || a.Phase == x.Phase) {
				currents = append(currents, x)
			}
		}
	default:
		return v.fail(p+".min_load_pct", "applies to rules on current channels and to pf and dpf, not to %s", a.Metric)
	}
	if c.ILA > 0 {
		return nil
	}
	for _, x := range currents {
		if x.FullScale == 0 {
			return v.fail(p+".min_load_pct", "needs a base: set il_a, or full_scale on current channel %s", x.Name)
		}
	}
	return nil
}
