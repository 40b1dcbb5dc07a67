package config

import (
	"strings"

	"github.com/gridloupe/gridloupe/metrics/quantity"
)

// Defaults returns a commented YAML document listing every key with its
// default and allowed values, for `gridloupe config --defaults`. The keys
// without a default (nominal values) hold an example; channels, and keys
// whose default is derived (gateway, reference, client_id), are comments.
// With a channels list appended it parses to the defaults.
// The alarm metric lines are built from metrics/quantity's table.
func Defaults() string {
	return strings.Replace(defaultsDoc, "{{alarm metrics}}", alarmMetricsDoc(), 1)
}

// alarmMetricsDoc lists the metrics an alarm may watch, with the units of
// the per-channel and per-phase quantities, as comment lines.
func alarmMetricsDoc() string {
	const pad = "#                                  #   "
	all := quantity.AlarmMetrics()
	k := len(quantity.AlarmChannelNames()) + 2 // the per-channel ones and pct, pct_il on the first line
	ch, rest := all[:k], all[k:]
	var b strings.Builder
	b.WriteString("#     metric: tdd_h50_pct          # required: " + strings.Join(ch, " | ") + "\n")
	b.WriteString(pad + "| " + strings.Join(rest, " | ") + " | " + MetricEvent + " (voltage events, below)\n")
	var units []string
	for _, q := range append(quantity.Channels(), quantity.Phases()...) {
		if q.Alarm {
			units = append(units, q.Name+" "+q.Unit)
		}
	}
	b.WriteString(pad + "units: " + strings.Join(units, ", ") + "; pct % of the fundamental, pct_il % of IL\n")
	return b.String()
}

const defaultsDoc = `# gridloupe configuration: every key, with its default and allowed values.
# CAUTION: wiring to mains can kill. Installation is work for qualified personnel
# under local electrical codes, with voltage sensors and CTs rated for the
# circuit and its measurement category. Never open-circuit a loaded CT
# secondary. gridloupe is a monitor, not a protective device.
#
# Durations use Go's syntax: 500ms, 30s, 20m, 168h. An empty value is the same
# as leaving the key out. Relative paths are relative to this file's folder.

site: site                 # free text: report title and MQTT topic level
# gateway: <host name>     # this gateway's name and MQTT topic level; default: the host name
nominal:
  frequency_hz: 50         # required: 50 or 60
  voltage_v: 230           # required: declared voltage in V (phase-to-neutral for wye and single-phase, line-to-line for delta)
  current_a: 0             # base for near-zero floors when a current channel has no full_scale; 0 = unset
wiring: wye                # single-phase | wye | delta (three-wire, no neutral)
sample_rate_hz: 0          # Hz, only when the input carries none; 0 = from the input.
                           # Must exceed 2 x highest order x 1.15 x nominal frequency
                           # (5750 Hz at 50 Hz, 6900 Hz at 60 Hz with harmonics: all)
# reference: va            # angle and frequency reference, a voltage channel; default: the first voltage channel
harmonics: all             # all (orders 1..50; needed for thd_h50_pct and tdd_h50_pct) or a list of orders 2..50, e.g. [5, 7, 11, 13]
il_a: 0                    # maximum demand load current in A, for TDD and pct_il (IEEE 519); 0 = unset
isc_a: 0                   # short-circuit current at the PCC in A, for the IEEE 519 table row; 0 = unset
lock_min_pct: 10           # below this % of the nominal voltage the tracker reports no lock; more than 0, less than 100

# channels:                # required, at least one voltage channel; matched by name to CSV columns, in file order for WAV
#   - name: va             # required, unique; no commas or white space
#     kind: voltage        # required: voltage | current
#     phase: a             # required: a | b | c | n (n: a neutral current); delta voltages ab | bc | ca | ba | cb | ac
#     scale: 1.0           # engineering value = raw x scale + offset; never 0
#     offset: 0.0
#     full_scale: 0        # engineering units, enables the clipped flag; 0 = none
#     delay_us: 0          # time the channel's sample lags the frame instant, microseconds (+ = sampled late; a sensor lagging by 40 µs is -40)
#     iio: ""              # iio source, required there: the scan element, e.g. voltage0
#     comtrade: 0          # COMTRADE input: 1-based analog channel index; 0 = match name to the channel id (case-insensitive)
# single-phase: one voltage on phase a, currents on a (and n).
# wye: voltages on a, b, c; each phase with a current needs its voltage.
# delta: line-to-line voltages; currents on two phases (the two-wattmeter hook-up:
#   ab and cb with CTs on a and c, the third current computed) or on all three; no n.

# circuits:                # several circuits on one bus; default: none (the currents form one circuit)
#   - name: incomer        # required, unique; records carry circuits.<name>.phases and .total
#     currents: [ia, ib, ic]  # required: its current channels; with circuits every current is in one
#     il_a: 480            # this circuit's IL for TDD and pct_il; 0 = the top-level il_a

# source:                  # daemon input; default: none (replay names its input on the command line)
#   kind: sim              # required in a source: sim | csv | wav | pcm | comtrade | iio
#   speed: 1               # sim only: 1 = real time, 60 = a minute per second, 0 = as fast as possible
#   path: rec.csv          # csv, wav, comtrade (the .cfg; the .dat beside it): the recording (required); pcm: a file, a FIFO or "-" for standard input
#   connect: ""            # pcm only, instead of path: host:port of a TCP sender, redialled with backoff
#   format: s16le          # pcm only, required: s16le | s24le | s32le | f32le, interleaved in channel order
#   framing: raw           # pcm only: raw (bare samples) | glf1 (frames with index and CRC, see README)
#                          # pcm needs sample_rate_hz: a raw stream carries none
#   device: iio:device0    # iio only, required: the device directory or its name attribute
#   sysfs: /sys/bus/iio/devices   # iio only: root of the devices (a fake tree for tests)
#   dev: /dev              # iio only: root of the character devices
#   buffer_length: 0       # iio only: scans in the kernel buffer; 0 = leave the device's
#   disturbances:          # sim only: voltage dips and swells the simulator injects; default none
#     - at: 10m            # simulated time since the source started
#       level_pct: 55      # voltage during it, % of nominal (0..200): below 100 a dip, above a swell, 0 an interruption
#       duration: 140ms    # more than 0, at most 1m
#       phases: ab         # letters from a, b, c; "" = all three
#                          # iio: sample_rate_hz, when set, is written to the device and read back

store:
  path: ""                 # bbolt file; "" = not configured
  commit_every: 60s        # aggregates are batched; alarm transitions commit at once; more than 0
  max_size_mb: 1024        # hard cap in MiB, 1..2047 (the whole file is memory-mapped); 1024 holds the default retention with all orders on 8 channels
  on_damage: set_aside     # a damaged file at start: set_aside (rename it, start fresh, keep measuring) | fail
  retention:               # how long each level is kept; more than 0
    3s: 168h
    10min: 9600h
    2h: 87600h

mqtt:
  broker: ""               # "" = off | tcp://host:port | ssl://host:port | embedded
  # listen: 127.0.0.1:1883 # embedded broker only: its address; beyond loopback it needs tls and a password
  # client_id: <gateway>   # default: the gateway name
  username: ""             # required when a password is set
  password_file: ""        # file holding the password (trailing line break removed); never logged
  password_env: ""         # or: an environment variable holding it; not both
  tls:                     # PEM files for ssl:// (or the embedded broker); cert and key go together
    ca: ""
    cert: ""
    key: ""
  topic_prefix: gridloupe  # one or more topic levels separated by /; no +, # or leading $
  telemetry: [10min]       # levels published, from 3s, 10min, 2h; [] = none
  telemetry_qos: {3s: 1, 10min: 1, 2h: 1}  # MQTT QoS per level, 0..2; 1 = kept until the broker acknowledges
  summary: [10min]         # levels whose slim summary (< 1 KB, for a BMS) is published retained, QoS 1; [] = none
  # summary_circuits: [incomer, pump1]  # with circuits: the circuits in the summary; default all (as many as fit 1 KB)

events:                    # voltage dips, swells and interruptions (IEC 61000-4-30 style, on Urms(1/2))
  dip_pct: 90              # % of nominal.voltage_v: an event opens when a voltage falls below this
  swell_pct: 110           # or rises above this; swell_pct - hysteresis_pct must stay above 100
  interruption_pct: 5      # every voltage below this: the event is an interruption; more than 0, less than dip_pct
  hysteresis_pct: 2        # a dip ends at dip_pct + this, a swell at swell_pct - this; 0 to less than 10
  pre_cycles: 10           # waveform captured before the start, nominal cycles, 0..600
  post_cycles: 20          # and after the end, 0..600
  max_capture_s: 4         # a capture is cut at this length, seconds; more than 0, at most 60

alarms: []
# alarms:                          # alarm rules; raised and cleared over MQTT with hysteresis
#   - name: current-distortion     # required, unique
{{alarm metrics}}#                                  # (h50: needs harmonics: all; tdd and pct_il: need il_a)
#     channel: ia                  # per-channel metrics: a configured channel
#     phase: total                 # pf and dpf: a | b | c | total (default total)
#     circuit: drive1              # pf, dpf, unbalance_current_pct with circuits: required, the circuit watched
#     harmonic: 5                  # pct and pct_il only: the order, 2..50, among those computed
#     level: 10min                 # 200ms | 3s | 10min | 2h (default 10min)
#     above: 8.0                   # exactly one of above or below, in the metric's units
#     # below: 0.9
#     deadband: 0.0                # hysteresis in the metric's units, >= 0
#     on_delay: 0s                 # sample time the condition must hold before raising
#     off_delay: 0s                # sample time it must be clear before clearing
#     severity: warning            # info | warning | critical (default warning)
#     min_load_pct: 0              # quiet below this % of il_a (or the current channel's full_scale); 0 = off
#     relative_to: ""              # "" (above/below are absolute) | baseline: above/below are a rise/drop from the
#                                  #   commissioning baseline learned per 10 % load bin (fundamental current, % of il_a)
#     learn: 168h                  # relative_to baseline: how long the baseline is learned from the first value
#   - name: supply-dip             # a rule on voltage events takes only these keys
#     metric: event                # raised when a dip, swell or interruption ends (a long one: while it lasts,
#                                  #   once its capture of max_capture_s is complete)
#     kind: [dip, interruption]    # dip | swell | interruption, or a list of them; absent = every kind
#     channel: va                  # a voltage channel; absent = any
#     on_delay: 0s                 # the shortest event that raises; 0 = every event
#     off_delay: 10m               # how long it stays raised after the last such event ended (default 10m)
#     severity: warning            # info | warning | critical (default warning)

# modbus:                  # read-only Modbus TCP server for a BMS; off unless this section is given
#   listen: 127.0.0.1:5020 # host:port; loopback by default (see the README before exposing it)
#   unit_id: 1             # unit identifier answered, 1..247 (0 and 255 are answered too)
#   word_order: high_first # high_first | low_first: which 16-bit half of a float32 comes first
# http:                    # /metrics (Prometheus), /api/latest (JSON) and the status page on /; off unless given
#   listen: 127.0.0.1:8080 # host:port; loopback by default

demand:                    # demand of the phase currents and total power (IEEE 519's IL is built from it)
  interval: 15m            # whole minutes from 1m to 60m that divide an hour
  method: fixed            # fixed (clock-aligned blocks) | sliding (the last interval, moved every 3 s)
`
