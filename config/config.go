package config

import (
	"fmt"
	"io"
	"os"
	"slices"
	"time"
)

// Config is one gridloupe configuration, validated. Build it with Load or
// Parse. A Config is a plain value: safe for concurrent reads, not writes.
//
// Relative paths in the file (store.path, source.path, mqtt.password_file,
// mqtt.tls.*) are resolved against the folder of the config file.
type Config struct {
	Path         string    // the config file as given to Load or Parse
	Site         string    // free text; report title and (sanitized) MQTT topic level; default "site"
	Gateway      string    // this gateway's name; default the host name
	Nominal      Nominal   // declared system values
	Wiring       string    // WiringSinglePhase, WiringWye (default) or WiringDelta
	SampleRateHz float64   // Hz; 0 = taken from the input
	Reference    string    // name of the angle and frequency reference (a voltage channel); default the first voltage channel
	Harmonics    Harmonics // computed harmonic orders
	ILA          float64   // il_a: maximum demand load current, A; 0 = unset (no TDD, no pct_il)
	IscA         float64   // isc_a: short-circuit current at the PCC, A; 0 = unset
	LockMinPct   float64   // below this percentage of the nominal voltage the tracker reports no lock; default 10
	Channels     []Channel // in file order (the WAV channel order)
	Circuits     []Circuit // several circuits on one bus; empty = the currents form one circuit, as before
	Source       Source    // daemon input; Kind "" = none configured
	Store        Store     // bbolt store settings
	MQTT         MQTT      // broker connection and topics
	Alarms       []Alarm   // alarm rules in file order
	Events       Events    // voltage-event detection
	// Disturbances are source.disturbances: the voltage dips and swells a
	// sim source injects (kept out of Source so Source stays comparable).
	Disturbances []Disturbance
	Modbus       Modbus // read-only Modbus TCP server for a BMS; off unless the section is given
	HTTP         HTTP   // Prometheus, JSON and status page; off unless the section is given
	Demand       Demand // demand interval and method
}

// Nominal holds the declared system values.
type Nominal struct {
	FrequencyHz float64 // 50 or 60, required
	VoltageV    float64 // declared voltage, phase-to-neutral for wye and single-phase, line-to-line for delta; required, > 0
	CurrentA    float64 // base for near-zero floors when a channel has no full_scale; 0 = unset
}

// Harmonics says which harmonic orders are computed.
type Harmonics struct {
	All    bool  // `harmonics: all`: orders 1..50, so the h50 values exist
	Orders []int // computed orders ascending, Orders[0] == 1; for All, 1..50
}

// MaxOrder returns the highest computed order (1 when only the fundamental is).
func (h Harmonics) MaxOrder() int {
	if len(h.Orders) == 0 {
		return 1
	}
	return h.Orders[len(h.Orders)-1]
}

// Has reports whether order h is computed.
func (h Harmonics) Has(order int) bool {
	_, ok := slices.BinarySearch(h.Orders, order)
	return ok
}

// Channel is one measured channel. Engineering value = raw·Scale + Offset.
type Channel struct {
	Name      string  // unique; matched to CSV column names; no commas or white space
	Kind      string  // KindVoltage or KindCurrent
	Phase     string  // "a", "b", "c", or "n" (neutral, currents only); delta voltages "ab", "bc", "ca", "ba", "cb" or "ac"
	Scale     float64 // engineering units per raw unit; default 1, never 0
	Offset    float64 // engineering units; default 0
	FullScale float64 // engineering units; 0 = none (no clipping check)
	DelayUS   float64 // sampling skew or sensor lag to correct, µs; order h is rotated by h·ω·delay
	Comtrade  int     // COMTRADE input: 1-based analog channel index; 0 = match Name to the channel id
	IIO       string  // iio source: the scan element, e.g. "voltage0" for scan_elements/in_voltage0_*; required there
	Line      int     // line of the channel's entry in the config file
	Level     string  // Name sanitized as an MQTT topic level (added; see sanitize in sanitize.go)
}

// Source is the daemon's input.
type Source struct {
	Kind         string  // "" (none), or one of SourceKinds()
	Speed        float64 // sim only: 1 = real time, 60 = one minute per second, 0 = as fast as possible; default 1 (0 for other kinds)
	Path         string  // csv, wav, pcm: the recording, FIFO or device (resolved against the config's folder); pcm: "-" = standard input
	Connect      string  // pcm only, instead of path: host:port of a TCP sender, redialled with backoff
	Format       string  // pcm only, required: one of PCMFormats()
	Framing      string  // pcm only: FramingRaw (default) or FramingGLF1
	Device       string  // iio only, required: the device directory (iio:device0) or its name attribute
	Sysfs        string  // iio only: root of the IIO devices; default /sys/bus/iio/devices
	Dev          string  // iio only: root of the character devices; default /dev
	BufferLength int     // iio only: scans in the kernel buffer; 0 = leave the device's
	Line         int     // line of the source key; 0 when absent
}

// SourceKinds lists the source.kind spellings.
func SourceKinds() []string {
	return []string{SourceSim, SourceCSV, SourceWAV, SourcePCM, SourceCOMTRADE, SourceIIO}
}

// PCMFormats lists the source.format spellings of a pcm source.
func PCMFormats() []string { return []string{"s16le", "s24le", "s32le", "f32le"} }

// Store configures the bbolt store.
type Store struct {
	Path        string                   // database file (resolved against the config's folder); "" = not configured
	CommitEvery time.Duration            // batch period for aggregates; default 60s
	MaxSizeMB   int                      // hard cap of the file, MiB; default 1024 (a week of slim 3 s values with all orders fits beside 400 days of 10 min and 10 years of 2 h values)
	Retention   map[string]time.Duration // keyed by "3s", "10min", "2h"; defaults 168h, 9600h, 87600h
	OnDamage    string                   // a damaged file at start: OnDamageSetAside (default) or OnDamageFail
}

// Values of store.on_damage.
const (
	OnDamageSetAside = "set_aside" // rename the file to <path>.damaged-<UTC time>, start a fresh one, keep measuring
	OnDamageFail     = "fail"      // exit 1 with the message
)

// MQTT configures the broker connection and topics.
type MQTT struct {
	Broker       string         // "" = off, "tcp://host:port", "ssl://host:port" or "embedded"
	Listen       string         // embedded broker only: host:port it listens on; default 127.0.0.1:1883 (a non-loopback address needs TLS and credentials)
	ClientID     string         // default: the gateway name
	Username     string         // "" = none
	PasswordFile string         // file holding the password (resolved against the config's folder); never logged
	PasswordEnv  string         // or: environment variable holding it
	TLS          TLS            // certificate files for ssl:// brokers
	TopicPrefix  string         // one or more topic levels separated by '/'; default "gridloupe"
	Telemetry    []string       // interval labels published; default ["10min"]; from 3s, 10min, 2h
	TelemetryQoS map[string]int // MQTT QoS per interval label, 0..2; default 1 for every level
	Summary      []string       // interval labels whose slim summary is published retained on …/summary/<interval>; default ["10min"]
	// SummaryCircuits, with circuits: the circuits whose entries the
	// summary carries, by name; nil = every circuit.
	SummaryCircuits []string
	Base            string // added: "<prefix>/<site level>/<gateway level>", sanitized; topics are Base+"/status" and so on
}

// TLS names PEM files (resolved against the config's folder). Cert and Key
// go together.
type TLS struct {
	CA, Cert, Key string
}

// Alarm is one alarm rule. Exactly one of Above and Below is set, except
// for metric event, which has neither (nor a Level).
type Alarm struct {
	Name       string        // unique
	Metric     string        // one of Metrics(), or MetricEvent
	Channel    string        // per-channel metrics: a configured channel; metric event: a voltage channel, or "" for any
	Kinds      []string      // metric event: the event kinds watched (EventKinds); empty = every kind
	Phase      string        // pf, dpf: "a", "b", "c" or "total" (default)
	Circuit    string        // pf, dpf, unbalance_current_pct with circuits: the circuit whose phase, total or phase currents are watched; required then
	Level      string        // interval label: 200ms, 3s, 10min (default), 2h
	Severity   string        // info, warning (default) or critical
	Above      *float64      // raise when the value exceeds this (metric units)
	Below      *float64      // raise when the value falls under this (metric units)
	Deadband   float64       // hysteresis in metric units, ≥ 0
	OnDelay    time.Duration // sample time the condition must hold before raising; metric event: the minimum event duration
	OffDelay   time.Duration // sample time it must be clear before clearing; metric event: after the last event ended, default 10m
	MinLoadPct float64       // quiet below this percentage of IL (or the current channel's full scale); 0 = off
	Harmonic   int           // metrics pct and pct_il: the order, 2..50
	RelativeTo string        // "" (absolute threshold) or RelativeBaseline: above/below are a rise/drop from the learned baseline
	Learn      time.Duration // relative_to baseline: the commissioning period the baseline is learned over; default 168h
	Line       int           // line of the rule's entry in the config file

	kindPaths []string // key path of each of Kinds, for the validator's errors
}

// MetricEvent is the alarm metric that watches voltage events.
const MetricEvent = "event"

// EventKinds are the event kinds an event rule's kind may name (DESIGN
// "Voltage events").
var EventKinds = []string{"dip", "swell", "interruption"}

// Spellings of enumerated values.
const (
	RelativeBaseline  = "baseline"
	WiringSinglePhase = "single-phase"
	WiringWye         = "wye"
	WiringDelta       = "delta"
	KindVoltage       = "voltage"
	KindCurrent       = "current"
	SourceSim         = "sim"
	SourceCSV         = "csv"
	SourceWAV         = "wav"
	SourcePCM         = "pcm"
	SourceCOMTRADE    = "comtrade"
	SourceIIO         = "iio"
	FramingRaw        = "raw"
	FramingGLF1       = "glf1"
	BrokerEmbedded    = "embedded"
)

// maxFileBytes bounds a config file: a full one is a few KiB, so anything
// this big is not a config (and YAML node trees cost memory and time).
const maxFileBytes = 256 << 10

// Load reads and parses the config file at path. A file that cannot be read
// gives an error wrapping ErrRead (and the os error, which names the path);
// content problems give an *Error as Parse does.
func Load(path string) (*Config, error) {
	f, err := os.Open(path)
	if err != nil {
		return nil, fmt.Errorf("%w: %w", ErrRead, err)
	}
	defer f.Close()
	data, err := io.ReadAll(io.LimitReader(f, maxFileBytes+1))
	if err != nil {
		return nil, fmt.Errorf("%w: %w", ErrRead, err)
	}
	return Parse(path, data)
}

// Parse parses and validates a config document; path names it in errors
// and anchors its relative paths. Every error it returns is an *Error.
func Parse(path string, data []byte) (*Config, error) {
	c, e := parse(path, data, os.Hostname)
	if e != nil {
		return nil, e
	}
	return c, nil
}

// ChannelIndex returns the index of the channel named name, or -1.
func (c *Config) ChannelIndex(name string) int {
	return slices.IndexFunc(c.Channels, func(ch Channel) bool { return ch.Name == name })
}

// VoltageChannels returns the indices of the voltage channels in file order.
func (c *Config) VoltageChannels() []int { return c.kindIdx(KindVoltage) }

// CurrentChannels returns the indices of the current channels in file order.
func (c *Config) CurrentChannels() []int { return c.kindIdx(KindCurrent) }

func (c *Config) kindIdx(kind string) []int {
	var idx []int
	for i, ch := range c.Channels {
		if ch.Kind == kind {
			idx = append(idx, i)
		}
	}
	return idx
}

// MinSampleRateHz returns the sample rate that must be exceeded so the
// highest computed order stays below the Nyquist frequency while the line
// frequency is up to trackHigh (1.15) times nominal: 2·maxOrder·1.15·f.
func (c *Config) MinSampleRateHz() float64 {
	return minRate(c.Harmonics.MaxOrder(), c.Nominal.FrequencyHz)
}

// CheckSampleRate checks a sample rate found in the input (CSV time column,
// WAV header) against the same rule as sample_rate_hz. The error wraps
// ErrInvalid.
func (c *Config) CheckSampleRate(fs float64) error {
	if msg := rateProblem(fs, c.Harmonics, c.Nominal.FrequencyHz); msg != "" {
		return fmt.Errorf("%w: %s: input sample rate: %s", ErrInvalid, c.Path, msg)
	}
	return nil
}
