package main

import (
	"context"
	"crypto/tls"
	"errors"
	"flag"
	"fmt"
	"io"
	"log/slog"
	"os"
	"path/filepath"
	"runtime"
	"runtime/pprof"
	"strings"
	"sync"
	"sync/atomic"
	"time"

	"github.com/gridloupe/gridloupe/cmd/gridloupe/internal/broker"
	"github.com/gridloupe/gridloupe/cmd/gridloupe/internal/gateway"
	"github.com/gridloupe/gridloupe/cmd/gridloupe/internal/outbox"
	"github.com/gridloupe/gridloupe/cmd/gridloupe/internal/sdnotify"
	"github.com/gridloupe/gridloupe/cmd/gridloupe/internal/sysclock"
	"github.com/gridloupe/gridloupe/cmd/internal/replaycmd"
	"github.com/gridloupe/gridloupe/config"
	"github.com/gridloupe/gridloupe/metrics"
	"github.com/gridloupe/gridloupe/metrics/alarm"
	"github.com/gridloupe/gridloupe/metrics/events"
	"github.com/gridloupe/gridloupe/store"
	"github.com/gridloupe/gridloupe/stream"
	"github.com/gridloupe/gridloupe/stream/input"
	"github.com/gridloupe/gridloupe/stream/live"
	"github.com/gridloupe/gridloupe/stream/mqtt"
	"github.com/gridloupe/gridloupe/stream/sim"
)

const runHelp = `Usage: gridloupe run --config FILE [flags]

Runs the gateway until SIGINT or SIGTERM: reads the configured source,
measures every 10/12-cycle window, keeps 3 s, 10 min and 2 h aggregates in
the bbolt store (store.path), raises and clears the configured alarms, and
publishes status, telemetry and alarms over MQTT through the store's outbox
(mqtt.broker; "embedded" starts a broker in the process on loopback). With a
modbus or http section it also serves the latest values over Modbus TCP and
HTTP (see the README).

Source kinds (source.kind):
  sim       the built-in drive-cabinet simulator (speed: 1 = real time)
  csv       a CSV recording (path)
  wav       a WAV recording (path)
  pcm       raw PCM, interleaved in channel order (format: s16le, s24le,
            s32le or f32le; sample_rate_hz required) from path (a file, a
            FIFO, "-" for standard input) or connect: host:port (a TCP
            sender, redialled with backoff); framing: glf1 for GLF1 frames
  comtrade  a COMTRADE recording (path: the .cfg, the .dat beside it), timed
            from its own first-sample time stamp
  iio       a Linux IIO ADC (device: iio:device0 or its name attribute; each
            channel names its scan element, iio: voltage0); the buffer is
            disabled and the _en files restored however run ends
Samples a live source loses are flagged gap, never stitched.

Exit status: 0 after a signal, 0 when a csv or wav source reaches its end
(a pcm file or a COMTRADE recording too, and after --stop-after), 1 when the simulator stops
otherwise, a pipe or standard input ends, a source fails or the store cannot
be opened, 2 for config errors. A damaged store file is renamed to
<path>.damaged-<UTC time> and a fresh one started (store.on_damage: fail
exits 1 instead).

Flags:
`

// daemonOptions are the knobs the demo and tests set on top of the config.
type daemonOptions struct {
	logFormat string
	logLevel  slog.Level
	// demo hooks
	onRecord     func(r *metrics.Record, active []string)
	onTransition func(t alarm.Transition)
	onEvent      func(r events.Record) // each stored voltage event (store goroutine)
	onReady      func(d *daemon)
	simTweak     func(sc *sim.Config)
	now          func() time.Time
	brokerAddr   string
	stopAfter    time.Duration // sim only: simulated time to run, then a clean stop
}

// daemon is one running gateway with its store, publisher and broker.
type daemon struct {
	setup  *metrics.Setup
	gw     *gateway.Gateway
	pub    *mqtt.Publisher
	brk    *broker.Broker
	source stream.FrameReader
	sim    *sim.Source
}

func cmdRun(ctx context.Context, args []string, stdout, stderr io.Writer) error {
	fs := flag.NewFlagSet("run", flag.ContinueOnError)
	cfgPath := fs.String("config", "", "config `FILE` (YAML); required")
	logFormat := fs.String("log-format", "text", "log format on stderr: text or json")
	logLevel := fs.String("log-level", "info", "log level: debug, info, warn or error")
	stopAfter := fs.Duration("stop-after", 0, "with source.kind sim: stop cleanly (exit 0) after this much simulated time; for soak tests and measurements")
	fs.Usage = func() {
		fmt.Fprint(fs.Output(), runHelp)
		fs.PrintDefaults()
	}
	if err := parseFlags(fs, args, stdout); err != nil {
		return err
	}
	if *cfgPath == "" || fs.NArg() != 0 {
		return usagef("run: --config FILE is required and takes no arguments")
	}
	var lvl slog.Level
	if err := lvl.UnmarshalText([]byte(*logLevel)); err != nil {
		return usagef("run: --log-level %q: allowed are debug, info, warn, error", *logLevel)
	}
	if *logFormat != "text" && *logFormat != "json" {
		return usagef("run: --log-format %q: allowed are text, json", *logFormat)
	}
	cfg, err := config.Load(*cfgPath)
	if err != nil {
		return &usageError{Err: err}
	}
	if *stopAfter < 0 || (*stopAfter > 0 && cfg.Source.Kind != config.SourceSim) {
		return usagef("run: --stop-after needs a positive duration and source.kind sim")
	}
	return runDaemon(ctx, cfg, daemonOptions{logFormat: *logFormat, logLevel: lvl, stopAfter: *stopAfter}, stderr)
}

func newLogger(w io.Writer, format string, lvl slog.Level) *slog.Logger {
	opts := &slog.HandlerOptions{Level: lvl}
	if format == "json" {
		return slog.New(slog.NewJSONHandler(w, opts))
	}
	return slog.New(slog.NewTextHandler(w, opts))
}

// Daemon wiring constants: the figures runDaemon's steps would otherwise
// carry as bare numbers.
const (
	// recordsShareTenths is the part of store.max_size_mb, in tenths, the
	// stored records may fill before run warns that retention will be
	// trimmed; the rest is left to the outbox classes (store: classShare).
	recordsShareTenths = 8
	// simBlockFrames is how many frames the pipeline reads per call from
	// the simulator (25 ms at its default 10 240 Hz); other sources use
	// the pipeline's default (stream.Config.BlockFrames).
	simBlockFrames = 256
	// drainTimeout is how long a stopping gateway waits, at most, for the
	// publisher to send what the last commit queued; drainPoll is how
	// often it looks at the outbox meanwhile.
	drainTimeout = 1500 * time.Millisecond
	drainPoll    = 50 * time.Millisecond
	// runFilterPeriod and runFilterWorst are the simulator's input-reactor
	// wear cycle under run (see runFilterProfile).
	runFilterPeriod = 6 * time.Hour
	runFilterWorst  = 0.3
)

// runDaemon wires the pieces and runs them until ctx ends or the source
// stops. Sinks first: store, publisher; then the source (STYLE.md §8);
// teardown runs in the reverse order through the defers.
func runDaemon(ctx context.Context, cfg *config.Config, o daemonOptions, stderr io.Writer) (err error) {
	log := newLogger(stderr, o.logFormat, o.logLevel)
	now := o.now
	if now == nil {
		now = time.Now
	}
	setup, cal, err := replaycmd.SetupFromConfig(cfg)
	if err != nil {
		return err
	}
	if err := checkRunConfig(cfg, setup); err != nil {
		return err
	}
	d := &daemon{setup: setup}

	db, storeNotice, err := openDaemonStore(cfg, setup, now, log)
	if err != nil {
		return err
	}
	defer func() { err = errors.Join(err, db.Close()) }()
	ev, err := loadAlarms(cfg, setup, db, log)
	if err != nil {
		return err
	}

	src, err := openDaemonSource(ctx, cfg, setup, db, o, now, log)
	if err != nil {
		return err
	}
	defer src.close()
	d.source, d.sim = src.source, src.sim
	if err := replaycmd.CheckRate(cfg, src.rate); err != nil {
		return err
	}
	clk := newSampleClock(now, o.onRecord)

	var wg sync.WaitGroup // the publisher, export socket and watchdog goroutines
	mq, err := startMQTT(cfg, o, db, storeNotice, clk.now, &wg, log)
	if err != nil {
		return err
	}
	defer mq.stop()
	d.pub, d.brk = mq.pub, mq.brk

	integ, err := startIntegration(cfg, setup, db, mq.base, mq.kick(), func() live.Health { return daemonHealth(d, db) }, log)
	if err != nil {
		return err
	}
	defer integ.Close()
	pc := daemonPipeline(cfg, setup, cal, src, now, log)
	gw, err := newDaemonGateway(cfg, o, pc, src, db, ev, mq, integ, clk, storeNotice, now, log)
	if err != nil {
		return err
	}
	d.gw = gw

	defer startExportSocket(cfg, db, &wg, log)()
	sd := sdnotify.FromEnv()
	_ = sd.Send("READY=1\nSTATUS=measuring")
	defer startWatchdog(ctx, sd, gw, &wg)()
	log.Info("gateway started", "site", cfg.Site, "gateway", cfg.Gateway, "source", cfg.Source.Kind,
		"sample_rate_hz", src.rate, "store", cfg.Store.Path, "broker", cfg.MQTT.Broker)
	if o.onReady != nil {
		o.onReady(d)
	}

	runErr := gw.Run(ctx)
	_ = sd.Send("STOPPING=1")
	writeHeapProfile(log)
	logStopping(gw, log)
	drainOutbox(mq.pub, db)
	return runResult(runErr)
}

// checkRunConfig checks what run needs beyond a valid config: a store
// path and a source.
func checkRunConfig(cfg *config.Config, setup *metrics.Setup) error {
	if cfg.Store.Path == "" {
		return usagef("%s: store.path is required for run", cfg.Path)
	}
	if cfg.Source.Kind == "" {
		return usagef("%s: source is required for run (kind: %s)", cfg.Path, strings.Join(config.SourceKinds(), ", "))
	}
	_, err := summaryCircuits(cfg, setup)
	return err
}

// openDaemonStore opens (or, if damaged, replaces) the store at
// store.path, sets its layout and warns when the retention periods need
// more room than the records' share of store.max_size_mb. notice is what
// a replaced store leaves for the status message.
func openDaemonStore(cfg *config.Config, setup *metrics.Setup, now func() time.Time, log *slog.Logger) (db *store.DB, notice string, err error) {
	if err := os.MkdirAll(filepath.Dir(cfg.Store.Path), 0o755); err != nil {
		return nil, "", fmt.Errorf("store: %w", err)
	}
	ret := map[metrics.Interval]time.Duration{}
	for k, v := range cfg.Store.Retention {
		if iv, ok := metrics.ParseInterval(k); ok {
			ret[iv] = v
		}
	}
	db, notice, err = openRunStore(store.Options{Path: cfg.Store.Path, MaxSizeMB: cfg.Store.MaxSizeMB, Retention: ret,
		Logger: log.With("component", "store"), Clock: now}, cfg.Store.OnDamage, now(), log)
	if err != nil {
		return nil, "", fmt.Errorf("cannot open the store: %w", err)
	}
	if err := db.SetLayout(setup); err != nil {
		return nil, "", errors.Join(fmt.Errorf("store: %w", err), db.Close())
	}
	if need := retentionBytes(setup, ret); need > int64(cfg.Store.MaxSizeMB)<<20*recordsShareTenths/10 {
		log.Warn("retention needs more room than store.max_size_mb: the oldest 3 s values will be trimmed before their retention ends",
			"needed_mb", need>>20, "max_size_mb", cfg.Store.MaxSizeMB)
	}
	return db, notice, nil
}

// sampleClock is the one clock for every message's time: the sample
// clock (the newest record's end), the wall clock only before the first
// record.
type sampleClock struct {
	ns       atomic.Int64
	wall     func() time.Time
	onRecord func(r *metrics.Record, active []string) // the demo's hook, may be nil
}

func newSampleClock(wall func() time.Time, onRecord func(r *metrics.Record, active []string)) *sampleClock {
	return &sampleClock{wall: wall, onRecord: onRecord}
}

// now is the newest record's end, or the wall clock before the first one.
func (c *sampleClock) now() time.Time {
	if n := c.ns.Load(); n != 0 {
		return time.Unix(0, n).UTC()
	}
	return c.wall()
}

// record advances the clock to r's end and passes r on to the hook.
func (c *sampleClock) record(r *metrics.Record, active []string) {
	c.ns.Store(r.Start.Add(time.Duration(r.DurationS * float64(time.Second))).UnixNano())
	if c.onRecord != nil {
		c.onRecord(r, active)
	}
}

// daemonMQTT is the running MQTT side: the publisher (nil without
// mqtt.broker) and the embedded broker (nil unless mqtt.broker is
// "embedded").
type daemonMQTT struct {
	pub  *mqtt.Publisher
	brk  *broker.Broker
	base string // topic base; "" without MQTT
	stop func() // stops the publisher, waits for the run's goroutines, closes the broker
}

// kick wakes the publisher after a commit; a no-op without MQTT.
func (m *daemonMQTT) kick() func() {
	if m.pub == nil {
		return func() {}
	}
	return m.pub.Kick
}

// startMQTT starts the embedded broker, if configured, and the publisher,
// which runs in a goroutine on wg until stop. Without mqtt.broker it
// starts nothing.
func startMQTT(cfg *config.Config, o daemonOptions, db *store.DB, storeNotice string, now func() time.Time,
	wg *sync.WaitGroup, log *slog.Logger) (*daemonMQTT, error) {
	pubCtx, stopPub := context.WithCancel(context.Background())
	m := &daemonMQTT{}
	m.stop = func() {
		stopPub()
		wg.Wait()
		if m.brk != nil {
			m.brk.Close()
		}
	}
	if cfg.MQTT.Broker == "" {
		return m, nil
	}
	fail := func(err error) (*daemonMQTT, error) { m.stop(); return nil, err }
	m.base = cfg.MQTT.Base
	url := cfg.MQTT.Broker
	pw, err := cfg.MQTT.Password()
	if err != nil {
		return fail(usagef("%s: mqtt: %v", cfg.Path, err))
	}
	tlsCfg, err := mqttTLS(cfg)
	if err != nil {
		return fail(err)
	}
	user, pubTLS := cfg.MQTT.Username, tlsCfg
	if url == config.BrokerEmbedded {
		b, err := broker.Start(broker.Config{Addr: embeddedAddr(o, cfg), Username: cfg.MQTT.Username, Password: pw,
			TLS: tlsCfg, Prefix: m.base, Logger: log})
		if err != nil {
			return fail(fmt.Errorf("embedded broker: %w", err))
		}
		m.brk = b
		// The gateway reaches its own broker on loopback with a login of
		// its own: no certificate to match, the only publisher under base.
		url, pubTLS = b.GatewayURL(), nil
		user, pw = b.GatewayLogin()
	}
	pub, err := mqtt.New(mqtt.Config{Broker: url, ClientID: cfg.MQTT.ClientID, Username: user,
		Password: pw, TLS: pubTLS, Base: m.base, Outbox: outbox.Store{DB: db}, Logger: log, Now: now})
	if err != nil {
		return fail(usagef("%s: mqtt: %v", cfg.Path, err))
	}
	m.pub = pub
	if storeNotice != "" {
		pub.SetNotice("store: " + storeNotice)
	}
	wg.Add(1)
	go func() {
		defer wg.Done()
		if err := pub.Run(pubCtx); err != nil {
			log.Error("publisher stopped", "err", err)
		}
	}()
	return m, nil
}

// daemonPipeline is the pipeline configuration of run: the shared wiring
// (pipelineConfig) plus where time starts and when records are flagged
// clock_unsynced.
func daemonPipeline(cfg *config.Config, setup *metrics.Setup, cal []stream.Cal, src *daemonSource,
	now func() time.Time, log *slog.Logger) stream.Config {
	pc := replaycmd.PipelineConfig(cfg, setup, cal, src.rate)
	pc.Base = now().UTC()
	if !src.base.IsZero() {
		pc.Base = src.base
	}
	if src.sim != nil {
		pc.Base = src.sim.Truth().Time
	}
	pc.Logger = log.With("component", "pipeline")
	if cfg.Source.Kind == config.SourceSim {
		pc.BlockFrames = simBlockFrames
	}
	// Records carry clock_unsynced when their times come from an
	// unsynchronised wall clock: a source paced in real time.
	if cfg.Source.Kind == config.SourceSim && cfg.Source.Speed == 1 {
		pc.Unsynced = func() bool { return !clockSynced() }
	}
	return pc
}

// clockSynced reports whether the system clock is synchronised (false
// when that cannot be told).
func clockSynced() bool { s, _ := sysclock.Synced(); return s }

// newDaemonGateway builds the gateway core from the opened pieces.
func newDaemonGateway(cfg *config.Config, o daemonOptions, pc stream.Config, src *daemonSource, db *store.DB,
	ev *alarm.Evaluator, mq *daemonMQTT, integ *integration, clk *sampleClock, storeNotice string,
	now func() time.Time, log *slog.Logger) (*gateway.Gateway, error) {
	pick, err := summaryCircuits(cfg, pc.Setup) // checked at start by checkRunConfig
	if err != nil {
		return nil, err
	}
	onStoreErr := func(error) {}
	var publishHealth func(topic string, payload []byte)
	if mq.pub != nil {
		publishHealth = mq.pub.Direct
		onStoreErr = func(err error) {
			if err == nil {
				mq.pub.SetProblem("")
				return
			}
			mq.pub.SetProblem(gateway.ProblemText(err))
		}
	}
	return gateway.New(gateway.Config{Pipeline: pc, Source: src.source, EndIsError: src.endIsError, Live: src.live,
		Store: db, Alarms: ev, Telemetry: parseLevels(cfg.MQTT.Telemetry), TelemetryQoS: parseLevelQoS(cfg.MQTT.TelemetryQoS),
		Summary: parseLevels(cfg.MQTT.Summary), SummaryCircuits: pick, Base: mq.base, Site: cfg.Site, Gateway: cfg.Gateway, Kick: mq.kick(),
		CommitEvery: cfg.Store.CommitEvery, Now: now, Synced: clockSynced, Logger: log.With("component", "gateway"),
		OnRecord: integ.onRecord(clk.record), OnWindow: integ.onWindow, OnTransition: o.onTransition,
		OnEvent: integ.onEvent(o.onEvent), OnStoreError: onStoreErr, Notice: storeNotice, PublishHealth: publishHealth})
}

// parseLevels is the aggregation levels named in a config list ("3s",
// "10min", "2h"); config validation has rejected any other name.
func parseLevels(names []string) []metrics.Interval {
	var ivs []metrics.Interval
	for _, l := range names {
		if iv, ok := metrics.ParseInterval(l); ok {
			ivs = append(ivs, iv)
		}
	}
	return ivs
}

// parseLevelQoS is mqtt.telemetry_qos keyed by aggregation level.
func parseLevelQoS(byName map[string]int) map[metrics.Interval]byte {
	q := map[metrics.Interval]byte{}
	for l, v := range byName {
		if iv, ok := metrics.ParseInterval(l); ok {
			q[iv] = byte(v)
		}
	}
	return q
}

// startExportSocket serves `gridloupe export` on the store's socket while
// this process holds the store; the returned func stops it.
func startExportSocket(cfg *config.Config, db *store.DB, wg *sync.WaitGroup, log *slog.Logger) (stop func()) {
	ctx, stop := context.WithCancel(context.Background())
	wg.Add(1)
	go func() {
		defer wg.Done()
		if err := gateway.ServeExport(ctx, gateway.SocketPath(cfg.Store.Path), db, log); err != nil {
			log.Warn("export socket unavailable", "err", err)
		}
	}()
	return stop
}

// startWatchdog pets the service manager's watchdog, when it set one,
// while windows keep coming; the returned func stops it.
func startWatchdog(ctx context.Context, sd sdnotify.Notifier, gw *gateway.Gateway, wg *sync.WaitGroup) (stop func()) {
	iv := sdnotify.WatchdogInterval()
	if iv <= 0 {
		return func() {}
	}
	wctx, stop := context.WithCancel(ctx)
	wg.Add(1)
	go func() {
		defer wg.Done()
		t := time.NewTicker(iv)
		defer t.Stop()
		last := uint64(0)
		for {
			select {
			case <-wctx.Done():
				return
			case <-t.C:
				if w := gw.Stats().Windows; w != last {
					last = w
					_ = sd.Send("WATCHDOG=1")
				}
			}
		}
	}()
	return stop
}

// logStopping logs the run's totals.
func logStopping(gw *gateway.Gateway, log *slog.Logger) {
	st := gw.Stats()
	log.Info("gateway stopping", "windows", st.Windows, "aggregates", st.Aggregates, "stored", st.Stored,
		"alarm_transitions", st.Transitions, "queued", st.Queued, "dropped", st.Dropped, "events_lost", st.EventsLost)
}

// drainOutbox gives a connected publisher up to drainTimeout to send what
// the last commit queued; nil pub (no MQTT) returns at once.
func drainOutbox(pub *mqtt.Publisher, db *store.DB) {
	if pub == nil {
		return
	}
	deadline := time.Now().Add(drainTimeout)
	for time.Now().Before(deadline) && pub.Connected() {
		if p, _ := db.Pending(0, 1); len(p) == 0 {
			return
		}
		time.Sleep(drainPoll)
	}
}

// runResult is run's error for how the gateway stopped: nil after a
// signal or a clean end, a source failure marked as such. It is
// returned, not also logged: main prints it once (STYLE.md §4).
func runResult(runErr error) error {
	if runErr == nil {
		return nil
	}
	if errors.Is(runErr, gateway.ErrSourceEnded) || errors.Is(runErr, input.ErrData) || errors.Is(runErr, stream.ErrSource) {
		return fmt.Errorf("source stopped: %w", runErr)
	}
	return runErr
}

// embeddedAddr is where the embedded broker listens: mqtt.listen, else
// loopback port 1883 (the demo picks a free port).
func embeddedAddr(o daemonOptions, cfg *config.Config) string {
	if o.brokerAddr != "" {
		return o.brokerAddr
	}
	if cfg.MQTT.Listen != "" {
		return cfg.MQTT.Listen
	}
	return broker.DefaultAddr
}

func mqttTLS(cfg *config.Config) (*tls.Config, error) {
	if cfg.MQTT.TLS.CA == "" && cfg.MQTT.TLS.Cert == "" {
		return nil, nil
	}
	t, err := mqtt.TLSConfig(cfg.MQTT.TLS.CA, cfg.MQTT.TLS.Cert, cfg.MQTT.TLS.Key)
	if err != nil {
		return nil, usagef("%s: mqtt.tls: %v", cfg.Path, err)
	}
	return t, nil
}

// simStart is where simulated time begins: the wall clock, or, when an
// accelerated simulator ran ahead of it before a restart, the end of the
// newest stored record or the newest alarm transition (committed at once,
// so it may lie beyond the last batch of records), so stored data never
// overlaps itself and alarm times never go backwards.
func simStart(db *store.DB, wall time.Time) time.Time {
	wall = afterAlarms(db, wall)
	for _, iv := range []metrics.Interval{metrics.Int3s, metrics.Int10min} {
		recs, err := db.Last(iv, 1)
		if err != nil || len(recs) == 0 {
			continue
		}
		end := recs[0].Start.Add(time.Duration(recs[0].DurationS * float64(time.Second)))
		if end.After(wall) {
			wall = end
		}
	}
	return wall
}

// writeHeapProfile writes a heap profile to $GRIDLOUPE_HEAPPROFILE, if set,
// when the gateway stops (for memory investigations; see DEVELOPERS.md).
func writeHeapProfile(log *slog.Logger) {
	path := os.Getenv("GRIDLOUPE_HEAPPROFILE")
	if path == "" {
		return
	}
	f, err := os.Create(path)
	if err != nil {
		log.Warn("heap profile", "err", err)
		return
	}
	defer f.Close()
	runtime.GC()
	if err := pprof.WriteHeapProfile(f); err != nil {
		log.Warn("heap profile", "err", err)
	}
}

// retentionBytes estimates the store size the retention periods need:
// records per level × the encoded record size.
func retentionBytes(s *metrics.Setup, ret map[metrics.Interval]time.Duration) int64 {
	var n int64
	for iv, d := range map[metrics.Interval]time.Duration{metrics.Int3s: 3 * time.Second,
		metrics.Int10min: 10 * time.Minute, metrics.Int2h: 2 * time.Hour} {
		if r := ret[iv]; r > 0 {
			n += int64(r/d) * int64(store.RecordBytesAt(s, iv)) // the 3 s level is stored slim
		}
	}
	return n
}

// runFilterProfile is how the simulator's input reactor wears and recovers
// under run: a runFilterPeriod (6 h) cycle, at worst runFilterWorst (30 %)
// of its filtering lost (the demo uses a faster cycle so alarms raise and
// clear within a minute).
func runFilterProfile() sim.FilterProfile {
	return sim.FilterProfile{Period: runFilterPeriod, Worst: runFilterWorst}
}

// daemonSource is the opened source of run and what the gateway needs to
// know about it.
type daemonSource struct {
	source     stream.FrameReader
	sim        *sim.Source // the simulator, when the source is one
	rate       float64     // sample rate, Hz
	endIsError bool        // the source's end is a failure (live sources, the simulator without --stop-after)
	live       bool        // a live source never blocks: full sink queues drop (and flag gap)
	base       time.Time   // a recording's own start time (COMTRADE); zero = the wall clock
	close      func()      // releases what was opened; called once by the owner
}

// openDaemonSource opens the configured source (sim, csv, wav, iio,
// comtrade, pcm).
func openDaemonSource(ctx context.Context, cfg *config.Config, setup *metrics.Setup, db *store.DB, o daemonOptions,
	now func() time.Time, log *slog.Logger) (*daemonSource, error) {
	ds := &daemonSource{endIsError: true, close: func() {}}
	var closer io.Closer
	var cleanup []func()
	ds.close = func() {
		if closer != nil {
			closer.Close()
		}
		for _, f := range cleanup {
			f()
		}
	}
	var rate float64
	switch cfg.Source.Kind {
	case config.SourceSim:
		rate = cfg.SampleRateHz
		if rate == 0 {
			rate = sim.DefaultSampleRate
		}
		sc := simConfig(cfg, rate)
		sc.Speed = cfg.Source.Speed
		sc.Start = simStart(db, now().UTC())
		sc.Filter = runFilterProfile()
		if o.simTweak != nil {
			o.simTweak(&sc)
		}
		if o.stopAfter > 0 {
			sc.Limit = uint64(o.stopAfter.Seconds() * rate)
			ds.endIsError = false
		}
		s, err := sim.New(sc)
		if err != nil {
			return nil, usagef("%s: source: %v", cfg.Path, err)
		}
		ds.source, ds.sim = s, s
	case config.SourceCSV, config.SourceWAV:
		f, err := os.Open(cfg.Source.Path)
		if err != nil {
			return nil, fmt.Errorf("source: %w", err)
		}
		closer = f
		names := make([]string, len(setup.Channels))
		for i, ch := range setup.Channels {
			names[i] = ch.Name
		}
		src, inRate, _, err := replaycmd.OpenInput(cfg.Source.Path, f, names)
		if err != nil {
			f.Close()
			return nil, err
		}
		if rate, err = replaycmd.ResolveRate(cfg, inRate, cfg.Source.Path); err != nil {
			f.Close()
			return nil, err
		}
		ds.source = src
		ds.endIsError = false
	case config.SourceIIO:
		in, first, err := openIIO(ctx, cfg, log.With("component", "source"))
		if err != nil {
			return nil, err
		}
		cleanup = append(cleanup, func() {
			if cerr := in.close(); cerr != nil {
				log.Error("iio device not restored", "err", cerr)
			}
		})
		ds.source, rate, ds.endIsError, ds.live, ds.base = in.src, in.src.SampleRate(), true, true, first
	case config.SourceCOMTRADE:
		rec, r, err := replaycmd.OpenCOMTRADE(cfg, cfg.Source.Path)
		if err != nil {
			return nil, err
		}
		closer, ds.source, rate, ds.endIsError, ds.base = rec, rec.Data, r, false, rec.Start
	case config.SourcePCM:
		in, isLive, err := openPCMSource(ctx, cfg, len(setup.Channels), log.With("component", "source"))
		if err != nil {
			return nil, err
		}
		cleanup = append(cleanup, func() {
			if l := in.Losses(); l != "" {
				log.Warn("pcm stream losses", "summary", l)
			}
			_ = in.Close()
		})
		ds.source, rate, ds.endIsError, ds.live = in.Src, cfg.SampleRateHz, isLive, isLive
	default:
		return nil, usagef("%s: source.kind %q: allowed are %s", cfg.Path, cfg.Source.Kind, strings.Join(config.SourceKinds(), ", "))
	}
	ds.rate = rate
	return ds, nil
}

// loadAlarms compiles the config's alarm rules with the states the store
// kept across restarts; nil when there are no rules.
func loadAlarms(cfg *config.Config, setup *metrics.Setup, db *store.DB, log *slog.Logger) (*alarm.Evaluator, error) {
	rules, err := alarmRules(cfg, setup)
	if err != nil || len(rules) == 0 {
		return nil, err
	}
	saved, err := db.AlarmStates()
	if err != nil {
		return nil, fmt.Errorf("store: alarm states: %w", err)
	}
	ev, err := alarm.New(rules, setup, gateway.FromStore(saved))
	if err != nil {
		return nil, usagef("%s: alarms: %v", cfg.Path, err)
	}
	if act := ev.Active(); len(act) > 0 {
		log.Info("alarms still raised from before the restart", "alarms", act)
	}
	return ev, nil
}
