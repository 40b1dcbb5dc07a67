package mqtt

import (
	"context"
	"crypto/tls"
	"encoding/json"
	"errors"
	"fmt"
	"log/slog"
	"net/url"
	"strings"
	"sync"
	"sync/atomic"
	"time"

	paho "github.com/eclipse/paho.mqtt.golang"

	"github.com/gridloupe/gridloupe/stream/encode"
	"github.com/gridloupe/gridloupe/stream/mqtt/topic"
)

// Message is one queued message as the publisher sees it.
type Message struct {
	Seq     uint64 // the outbox sequence number, written as the payload's first key
	Topic   string
	Payload []byte // a JSON object (or any bytes: then sent as is)
	QoS     byte   // 0, 1 or 2
	Retain  bool
	Queued  time.Time // when it was queued
}

// Outbox is what the publisher needs of a durable queue: the oldest
// messages after a sequence number, in ascending order, and deletion of
// delivered ones. The daemon adapts the store's outbox to it
// (cmd/gridloupe/internal/outbox).
type Outbox interface {
	Pending(after uint64, limit int) ([]Message, error)
	Ack(seqs ...uint64) error
}

// Defaults for the zero values of Config.
const (
	DefaultInFlight      = 8
	DefaultAckTimeout    = 10 * time.Second
	DefaultMaxReconnect  = 45 * time.Second // DESIGN: 30–60 s
	DefaultWriteTimeout  = 10 * time.Second
	DefaultPoll          = time.Second
	DefaultRetryInterval = 3 * time.Second
	DefaultStatusEvery   = time.Minute // a flapping store must not flood the retained status
)

// Fixed client settings.
const (
	keepAlive      = 30 * time.Second
	connectTimeout = 10 * time.Second
	maxInFlight    = 1024        // well below MQTT's 65535 packet identifiers
	offlineWait    = time.Second // for the shutdown status ack; keeps Run's return near 1.5 s
	quiesceMs      = 250         // paho Disconnect quiesce, milliseconds
	errLogEvery    = time.Minute // repeated publish errors are logged at most this often
	maxAckRetry    = 4096        // delivered seqs kept for a retried Ack when the store fails
)

// Config configures a Publisher.
type Config struct {
	Broker        string           // tcp://host:port or ssl://host:port (mqtt://, tls://, mqtts:// also accepted)
	ClientID      string           // MQTT client identifier; required
	Username      string           // "" = none (user info in Broker is used when this is empty)
	Password      string           // never logged
	TLS           *tls.Config      // for ssl://; build it with TLSConfig; nil = system roots
	Base          string           // topic base "<prefix>/<site>/<gateway>", already sanitised by config
	Outbox        Outbox           // the queue; required
	InFlight      int              // messages published before waiting for acks; 0 = 8
	AckTimeout    time.Duration    // wait for a delivery token (QoS 1 PUBACK); 0 = 10 s
	MaxReconnect  time.Duration    // paho MaxReconnectInterval; 0 = 45 s
	WriteTimeout  time.Duration    // paho WriteTimeout; 0 = 10 s
	Poll          time.Duration    // outbox poll when not kicked; 0 = 1 s
	RetryInterval time.Duration    // paho ConnectRetryInterval, first connection only; 0 = 3 s
	StatusEvery   time.Duration    // a changed problem or notice republishes the status at most this often; 0 = 1 min
	Logger        *slog.Logger     // nil = discard
	Now           func() time.Time // status times; nil = time.Now
}

// Stats are a publisher's counters since New.
type Stats struct {
	Connected   bool
	Published   uint64    // PUBLISH calls for queued messages, resends included
	Acked       uint64    // messages delivered and deleted from the outbox
	Dropped     uint64    // messages deleted unsent because their topic cannot be published
	Direct      uint64    // messages handed to Direct and acknowledged by the broker
	Reconnects  uint64    // connections after the first one
	Failures    uint64    // publish, outbox and connection errors
	LastError   string    // the most recent error, password masked; "" = none
	LastErrorAt time.Time // when LastError happened
}

// Publisher sends the outbox to a broker. Run must be called once; Kick,
// Connected and Stats are safe for concurrent use, also before and after Run.
type Publisher struct {
	cfg     Config
	log     *slog.Logger
	client  paho.Client
	broker  string // URL without user info, for logs
	site    string
	gateway string

	kick    chan struct{} // cap 1: new messages queued
	changed chan struct{} // cap 1: connection came up or went down
	running atomic.Bool

	connects  atomic.Uint64 // successful connections
	statusGen atomic.Uint64 // bumped by SetProblem: the online status must be republished
	problem   atomic.Pointer[string]
	notice    atomic.Pointer[string]    // SetNotice: kept for the process's life
	direct    atomic.Pointer[directMsg] // Direct: the newest one waiting
	directN   atomic.Uint64             // direct messages delivered
	failing   atomic.Bool               // a connection failure was logged since the last connect
	published atomic.Uint64
	acked     atomic.Uint64
	dropped   atomic.Uint64
	failures  atomic.Uint64

	errMu     sync.Mutex
	lastErr   string
	lastErrAt time.Time

	// Owned by the Run goroutine.
	errLogAt       time.Time
	suppressed     int
	ackRetry       []uint64
	retryDelivered int // how many of ackRetry were delivered (the rest were dropped)
	toks           []paho.Token
	deadlines      []time.Time
}

// New validates cfg and builds the (not yet connected) client.
func New(cfg Config) (*Publisher, error) {
	u, err := brokerURL(&cfg)
	if err != nil {
		return nil, err
	}
	switch {
	case cfg.ClientID == "":
		return nil, fmt.Errorf("mqtt: client id is empty: %w", ErrConfig)
	case !validBase(cfg.Base):
		return nil, fmt.Errorf("mqtt: topic base %q: empty level, wildcard, leading '$' or bad UTF-8: %w", cfg.Base, ErrConfig)
	case cfg.Outbox == nil:
		return nil, fmt.Errorf("mqtt: no outbox: %w", ErrConfig)
	case cfg.InFlight < 0 || cfg.InFlight > maxInFlight:
		return nil, fmt.Errorf("mqtt: in-flight window %d: want 0..%d: %w", cfg.InFlight, maxInFlight, ErrConfig)
	case cfg.AckTimeout < 0 || cfg.MaxReconnect < 0 || cfg.WriteTimeout < 0 || cfg.Poll < 0 || cfg.RetryInterval < 0 || cfg.StatusEvery < 0:
		return nil, fmt.Errorf("mqtt: negative duration: %w", ErrConfig)
	}
	setDefaults(&cfg)
	log := cfg.Logger
	if log == nil {
		log = slog.New(slog.DiscardHandler)
	}
	p := &Publisher{
		cfg: cfg, log: log.With("component", "mqtt"), broker: u.String(),
		kick: make(chan struct{}, 1), changed: make(chan struct{}, 1),
		toks: make([]paho.Token, 0, cfg.InFlight), deadlines: make([]time.Time, 0, cfg.InFlight),
	}
	levels := strings.Split(cfg.Base, "/")
	p.gateway = levels[len(levels)-1]
	if len(levels) > 1 {
		p.site = levels[len(levels)-2]
	}

	o := paho.NewClientOptions()
	o.AddBroker(u.String())
	o.SetClientID(cfg.ClientID)
	o.SetUsername(cfg.Username)
	o.SetPassword(cfg.Password)
	o.SetProtocolVersion(4) // MQTT 3.1.1; no fallback attempts at 3.1
	o.SetCleanSession(true) // the outbox is the queue (DESIGN)
	o.SetResumeSubs(false)
	o.SetOrderMatters(false) // we subscribe to nothing; ordering is ours, by waiting per window
	o.SetAutoReconnect(true)
	o.SetConnectRetry(true)
	o.SetConnectRetryInterval(cfg.RetryInterval)
	o.SetMaxReconnectInterval(cfg.MaxReconnect)
	o.SetWriteTimeout(cfg.WriteTimeout)
	o.SetConnectTimeout(connectTimeout)
	o.SetKeepAlive(keepAlive)
	// paho's memory store, in its ordered form: after an automatic reconnect
	// paho resends what it still holds, and the plain memory store would
	// resend it in map order. Two in-order streams of the same seqs (paho's
	// resend and ours) keep every seq's first arrival in order.
	o.SetStore(paho.NewOrderedMemoryStore())
	o.SetBinaryWill(topic.Status(cfg.Base), p.statusPayload("offline", "connection_lost", false), 1, true)
	o.SetConnectionNotificationHandler(p.onNotify)
	if cfg.TLS != nil {
		o.SetTLSConfig(cfg.TLS)
	}
	p.client = paho.NewClient(o)
	return p, nil
}

// brokerURL checks cfg.Broker and moves any user info into the credentials,
// so that neither paho nor an error message sees it in the URL.
func brokerURL(cfg *Config) (*url.URL, error) {
	u, err := url.Parse(cfg.Broker)
	if err != nil {
		// url.Error quotes the whole URL, user info included: keep only its cause.
		var ue *url.Error
		if errors.As(err, &ue) {
			err = ue.Err
		}
		return nil, fmt.Errorf("mqtt: broker URL: %w: %w", ErrConfig, err)
	}
	if u.User != nil {
		if cfg.Username == "" {
			cfg.Username = u.User.Username()
		}
		if pw, ok := u.User.Password(); ok && cfg.Password == "" {
			cfg.Password = pw
		}
		u.User = nil
	}
	secure := false
	switch u.Scheme {
	case "tcp", "mqtt":
	case "ssl", "tls", "mqtts":
		secure = true
	default:
		return nil, fmt.Errorf("mqtt: broker %s: scheme must be tcp or ssl: %w", u.Redacted(), ErrConfig)
	}
	if u.Hostname() == "" || u.Port() == "" {
		return nil, fmt.Errorf("mqtt: broker %s: want scheme://host:port: %w", u.Redacted(), ErrConfig)
	}
	if cfg.TLS != nil && !secure {
		return nil, fmt.Errorf("mqtt: broker %s: TLS settings given for a plain tcp:// broker (use ssl://): %w", u.Redacted(), ErrConfig)
	}
	if secure && cfg.TLS == nil {
		cfg.TLS = &tls.Config{MinVersion: tls.VersionTLS12}
	}
	return u, nil
}

func setDefaults(cfg *Config) {
	def := func(d *time.Duration, v time.Duration) {
		if *d == 0 {
			*d = v
		}
	}
	if cfg.InFlight == 0 {
		cfg.InFlight = DefaultInFlight
	}
	def(&cfg.AckTimeout, DefaultAckTimeout)
	def(&cfg.MaxReconnect, DefaultMaxReconnect)
	def(&cfg.WriteTimeout, DefaultWriteTimeout)
	def(&cfg.Poll, DefaultPoll)
	def(&cfg.RetryInterval, DefaultRetryInterval)
	def(&cfg.StatusEvery, DefaultStatusEvery)
	if cfg.Now == nil {
		cfg.Now = time.Now
	}
}

// statusJSON is the payload of <base>/status.
type statusJSON struct {
	Status  string `json:"status"`
	Time    string `json:"time,omitempty"`
	Site    string `json:"site,omitempty"`
	Gateway string `json:"gateway"`
	Reason  string `json:"reason,omitempty"`
	Problem string `json:"problem,omitempty"`
	Notice  string `json:"notice,omitempty"`
}

func (p *Publisher) statusPayload(status, reason string, withTime bool) []byte {
	s := statusJSON{Status: status, Site: p.site, Gateway: p.gateway, Reason: reason}
	if status == "online" {
		if pr := p.problem.Load(); pr != nil {
			s.Problem = *pr
		}
		if n := p.notice.Load(); n != nil {
			s.Notice = *n
		}
	}
	if withTime {
		s.Time = p.cfg.Now().UTC().Format(encode.TimeLayout)
	}
	b, _ := json.Marshal(s) // strings only: cannot fail (invalid UTF-8 becomes U+FFFD)
	return b
}

// SetProblem sets (or, with "", clears) a problem the gateway reports in
// its retained online status, e.g. a failing store: the outbox lives in the
// store, so such news cannot wait in it. The status is republished at once
// when connected. Safe for concurrent use; never blocks.
func (p *Publisher) SetProblem(msg string) {
	if old := p.problem.Load(); (old == nil && msg == "") || (old != nil && *old == msg) {
		return
	}
	if msg == "" {
		p.problem.Store(nil)
	} else {
		p.problem.Store(&msg)
	}
	p.statusGen.Add(1)
	signal(p.kick)
}

// SetNotice sets news that the retained online status carries for the rest
// of the process's life, such as a damaged store set aside at start (unlike
// a problem, nothing clears it). Safe for concurrent use; never blocks.
func (p *Publisher) SetNotice(msg string) {
	p.notice.Store(&msg)
	p.statusGen.Add(1)
	signal(p.kick)
}

// directMsg is a message published outside the outbox.
type directMsg struct {
	topic   string
	payload []byte
}

// Direct hands the publisher a message to publish at QoS 1, not retained,
// outside the outbox: the health message, which must get out while the
// store is full. Only the newest waits; one not yet sent when a newer comes,
// or while the broker is unreachable, is replaced (each carries cumulative
// counters). It never blocks. Safe for concurrent use.
func (p *Publisher) Direct(topic string, payload []byte) {
	p.direct.Store(&directMsg{topic: topic, payload: payload})
	signal(p.kick)
}

// Kick tells the publisher that new messages were queued. It never blocks.
func (p *Publisher) Kick() { signal(p.kick) }

// Connected reports whether the client has an open connection to the broker.
func (p *Publisher) Connected() bool { return p.client.IsConnectionOpen() }

// Stats returns the counters.
func (p *Publisher) Stats() Stats {
	s := Stats{
		Connected: p.Connected(), Published: p.published.Load(), Acked: p.acked.Load(),
		Dropped: p.dropped.Load(), Failures: p.failures.Load(), Direct: p.directN.Load(),
	}
	if c := p.connects.Load(); c > 1 {
		s.Reconnects = c - 1
	}
	p.errMu.Lock()
	s.LastError, s.LastErrorAt = p.lastErr, p.lastErrAt
	p.errMu.Unlock()
	return s
}

func signal(ch chan struct{}) {
	select {
	case ch <- struct{}{}:
	default:
	}
}

// onNotify runs on paho's goroutines. Notifications may arrive out of
// order, so they only wake Run; the connection state is read from the client.
func (p *Publisher) onNotify(_ paho.Client, n paho.ConnectionNotification) {
	switch n := n.(type) {
	case paho.ConnectionNotificationConnected:
		c := p.connects.Add(1)
		p.failing.Store(false)
		p.log.Info("mqtt connected", "broker", p.broker, "connects", c)
		signal(p.changed)
	case paho.ConnectionNotificationLost:
		p.setErr(n.Reason)
		p.log.Warn("mqtt connection lost; reconnecting", "broker", p.broker, "err", p.mask(n.Reason))
		signal(p.changed)
	case paho.ConnectionNotificationFailed:
		p.setErr(n.Reason)
		if p.failing.CompareAndSwap(false, true) {
			p.log.Warn("mqtt broker unreachable; retrying", "broker", p.broker, "err", p.mask(n.Reason))
		}
	}
}

// mask returns err's text with the password masked.
func (p *Publisher) mask(err error) string {
	if err == nil {
		return ""
	}
	s := err.Error()
	if p.cfg.Password != "" {
		s = strings.ReplaceAll(s, p.cfg.Password, "*****")
	}
	return s
}

func (p *Publisher) setErr(err error) {
	if err == nil {
		return
	}
	p.failures.Add(1)
	s := p.mask(err)
	p.errMu.Lock()
	p.lastErr, p.lastErrAt = s, p.cfg.Now()
	p.errMu.Unlock()
}

// report records err and logs it, at most once per errLogEvery. Run's goroutine only.
func (p *Publisher) report(msg string, err error) {
	p.setErr(err)
	now := time.Now()
	if !p.errLogAt.IsZero() && now.Sub(p.errLogAt) < errLogEvery {
		p.suppressed++
		return
	}
	p.log.Warn(msg, "err", p.mask(err), "suppressed", p.suppressed)
	p.errLogAt, p.suppressed = now, 0
}

// errConnChanged means the connection went down or was replaced while a
// window was in flight.
var errConnChanged = errors.New("mqtt: connection changed")

// Run connects and publishes the outbox until ctx ends. It keeps retrying an
// unreachable broker and returns only on cancellation: then it publishes the
// retained offline status (when connected), disconnects and returns nil,
// normally within about 1.5 s (a network write stalled in the kernel can
// add up to WriteTimeout). Run may be called once.
func (p *Publisher) Run(ctx context.Context) error {
	if !p.running.CompareAndSwap(false, true) {
		return ErrRunning
	}
	p.log.Info("mqtt connecting", "broker", p.broker, "client_id", p.cfg.ClientID)
	p.client.Connect() // with ConnectRetry its token completes only on success; state comes via onNotify
	var after, seen, seenGen uint64
	var lastStatus time.Time // last status published for a change of problem or notice
	for ctx.Err() == nil {
		if !p.client.IsConnectionOpen() {
			p.wait(ctx, nil)
			continue
		}
		if c, g := p.connects.Load(), p.statusGen.Load(); c != seen || (g != seenGen && time.Since(lastStatus) >= p.cfg.StatusEvery) {
			if c == seen {
				lastStatus = time.Now() // a change, not a (re)connect: debounced
			}
			seen, seenGen = c, g
			if err := p.announce(ctx, c); err != nil {
				if !errors.Is(err, errConnChanged) && ctx.Err() == nil {
					p.report("mqtt online status not delivered", err)
					seen = 0 // try again
					p.wait(ctx, nil)
				}
				continue
			}
		}
		if d := p.direct.Swap(nil); d != nil {
			tok := p.client.Publish(d.topic, 1, false, d.payload)
			if err := p.await(ctx, tok, time.Now().Add(p.cfg.AckTimeout), seen); err != nil {
				p.direct.CompareAndSwap(nil, d) // try again unless a newer one came
				if !errors.Is(err, errConnChanged) && ctx.Err() == nil {
					p.report("mqtt direct message not delivered", err)
					p.wait(ctx, nil)
				}
				continue
			}
			p.directN.Add(1)
		}
		p.retryAck()
		msgs, err := p.cfg.Outbox.Pending(after, p.cfg.InFlight)
		if err != nil {
			p.report("mqtt outbox read failed", err)
			p.wait(ctx, nil)
			continue
		}
		if len(msgs) == 0 {
			p.wait(ctx, p.kick)
			continue
		}
		done, err := p.sendWindow(ctx, msgs)
		if done > 0 {
			after = msgs[done-1].Seq
			p.ack(msgs[:done], !errors.Is(err, ErrBadTopic))
		}
		if err != nil && ctx.Err() == nil {
			if !errors.Is(err, errConnChanged) && !errors.Is(err, ErrBadTopic) {
				p.report("mqtt publish failed; will resend", err)
				p.wait(ctx, nil) // back off before resending
			}
		}
	}
	return p.shutdown()
}

// wait blocks until ctx ends, the connection changes, extra is signalled
// (nil = never) or Poll passes.
func (p *Publisher) wait(ctx context.Context, extra chan struct{}) {
	t := time.NewTimer(p.cfg.Poll)
	defer t.Stop()
	select {
	case <-ctx.Done():
	case <-p.changed:
	case <-extra:
	case <-t.C:
	}
}

// announce publishes the retained online status for connection epoch.
func (p *Publisher) announce(ctx context.Context, epoch uint64) error {
	tok := p.client.Publish(topic.Status(p.cfg.Base), 1, true, p.statusPayload("online", "", true))
	return p.await(ctx, tok, time.Now().Add(p.cfg.AckTimeout), epoch)
}

// await waits for tok until deadline, ctx's end or a change of connection.
func (p *Publisher) await(ctx context.Context, tok paho.Token, deadline time.Time, epoch uint64) error {
	t := time.NewTimer(time.Until(deadline))
	defer t.Stop()
	for {
		select {
		case <-tok.Done():
			return tok.Error()
		case <-t.C:
			return ErrAckTimeout
		case <-ctx.Done():
			return ctx.Err()
		case <-p.changed:
			if !p.client.IsConnectionOpen() || p.connects.Load() != epoch {
				return errConnChanged
			}
		}
	}
}

// sendWindow publishes msgs (seq order) and waits for their tokens in
// order. It returns how many leading messages are delivered and why it
// stopped early; when the first message's topic cannot be published it
// returns 1 and an error wrapping ErrBadTopic (the message is to be dropped).
func (p *Publisher) sendWindow(ctx context.Context, msgs []Message) (int, error) {
	if !publishable(msgs[0].Topic) {
		p.dropped.Add(1)
		err := fmt.Errorf("seq %d topic %q: %w", msgs[0].Seq, msgs[0].Topic, ErrBadTopic)
		p.report("mqtt message dropped", err)
		return 1, err
	}
	n := 1
	for n < len(msgs) && publishable(msgs[n].Topic) {
		n++
	}
	msgs = msgs[:n]
	epoch := p.connects.Load()
	p.toks, p.deadlines = p.toks[:0], p.deadlines[:0]
	for i := range msgs {
		m := &msgs[i]
		p.toks = append(p.toks, p.client.Publish(m.Topic, m.QoS, m.Retain, WithSeq(m.Payload, m.Seq)))
		p.deadlines = append(p.deadlines, time.Now().Add(p.cfg.AckTimeout))
	}
	p.published.Add(uint64(n))
	for i, tok := range p.toks {
		if err := p.await(ctx, tok, p.deadlines[i], epoch); err != nil {
			if !errors.Is(err, errConnChanged) && !errors.Is(err, context.Canceled) && !errors.Is(err, context.DeadlineExceeded) {
				err = fmt.Errorf("seq %d: %w", msgs[i].Seq, err)
			}
			return i, err
		}
		// A QoS 0 token completes when the packet is written; if the
		// connection is gone by then, count it as not delivered.
		if msgs[i].QoS == 0 && (!p.client.IsConnectionOpen() || p.connects.Load() != epoch) {
			return i, errConnChanged
		}
	}
	return n, nil
}

// ack deletes delivered (or, with delivered false, dropped) messages from
// the outbox; a failed Ack is retried.
func (p *Publisher) ack(msgs []Message, delivered bool) {
	seqs := make([]uint64, len(msgs))
	for i := range msgs {
		seqs[i] = msgs[i].Seq
	}
	if err := p.cfg.Outbox.Ack(seqs...); err != nil {
		p.report("mqtt outbox ack failed; will retry", err)
		if len(p.ackRetry)+len(seqs) <= maxAckRetry { // beyond: resent after a restart instead
			p.ackRetry = append(p.ackRetry, seqs...)
			if delivered {
				p.retryDelivered += len(seqs)
			}
		}
		return
	}
	if delivered {
		p.acked.Add(uint64(len(seqs)))
	}
}

func (p *Publisher) retryAck() {
	if len(p.ackRetry) == 0 {
		return
	}
	if err := p.cfg.Outbox.Ack(p.ackRetry...); err != nil {
		p.report("mqtt outbox ack failed; will retry", err)
		return
	}
	p.acked.Add(uint64(p.retryDelivered)) // dropped (bad-topic) messages are not counted as acked
	p.ackRetry, p.retryDelivered = p.ackRetry[:0], 0
}

// shutdown publishes the offline status and disconnects.
func (p *Publisher) shutdown() error {
	if p.client.IsConnectionOpen() {
		tok := p.client.Publish(topic.Status(p.cfg.Base), 1, true, p.statusPayload("offline", "shutdown", true))
		if !tok.WaitTimeout(offlineWait) {
			p.log.Warn("mqtt offline status not acknowledged before disconnect")
		} else if err := tok.Error(); err != nil {
			p.log.Warn("mqtt offline status not delivered", "err", p.mask(err))
		}
	}
	p.retryAck()
	p.client.Disconnect(quiesceMs)
	p.log.Info("mqtt disconnected", "broker", p.broker)
	return nil
}
