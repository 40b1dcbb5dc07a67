package broker

import (
	"crypto/rand"
	"crypto/sha256"
	"crypto/subtle"
	"crypto/tls"
	"errors"
	"fmt"
	"log/slog"
	"net"
	"strings"
	"sync"

	mqtt "github.com/mochi-mqtt/server/v2"
	"github.com/mochi-mqtt/server/v2/listeners"
	"github.com/mochi-mqtt/server/v2/packets"
)

// DefaultAddr is where the broker listens when Config.Addr is empty.
const DefaultAddr = "127.0.0.1:1883"

// Config configures Start.
type Config struct {
	Addr     string      // host:port; "" = 127.0.0.1:1883; port 0 picks a free port
	Username string      // with Password: the login of every client but the gateway; "" = other clients anonymous and read-only (loopback only)
	Password string      // never logged
	TLS      *tls.Config // server TLS with a certificate; nil = plain TCP (loopback only)
	// Prefix is the topic base only the gateway may publish under (and
	// below); other clients may subscribe to anything and, when logged in,
	// publish elsewhere. "" = only the gateway publishes at all.
	Prefix string
	Logger *slog.Logger // nil = discard
}

// Broker is a running embedded broker. Its methods are safe for concurrent use.
type Broker struct {
	srv      *mqtt.Server
	addr     string
	selfAddr string // the gateway's loopback listener
	selfUser string
	selfPass string
	once     sync.Once
	close    error
}

// selfUser prefixes the gateway's own login, made afresh at every Start.
const selfUser = "gridloupe-gateway-"

// Start listens on cfg.Addr and serves MQTT until Close.
func Start(cfg Config) (*Broker, error) {
	addr := cfg.Addr
	if addr == "" {
		addr = DefaultAddr
	}
	host, _, err := net.SplitHostPort(addr)
	if err != nil {
		return nil, fmt.Errorf("broker: address %q: %w: %w", addr, ErrConfig, err)
	}
	if (cfg.Username == "") != (cfg.Password == "") {
		return nil, fmt.Errorf("broker: give both a username and a password, or neither: %w", ErrConfig)
	}
	if cfg.TLS != nil && len(cfg.TLS.Certificates) == 0 && cfg.TLS.GetCertificate == nil {
		return nil, fmt.Errorf("broker: TLS settings without a server certificate: %w", ErrConfig)
	}
	if err := exposure(host, cfg); err != nil {
		return nil, fmt.Errorf("broker: address %q: %w", addr, err)
	}
	log := cfg.Logger
	if log == nil {
		log = slog.New(slog.DiscardHandler)
	}
	log = log.With("component", "broker")

	secret := make([]byte, 24)
	if _, err := rand.Read(secret); err != nil {
		return nil, fmt.Errorf("broker: gateway login: %w", err)
	}
	ln, err := net.Listen("tcp", addr)
	if err != nil {
		return nil, fmt.Errorf("broker: listen %s: %w", addr, err)
	}
	b := &Broker{addr: ln.Addr().String(), selfAddr: ln.Addr().String(),
		selfUser: selfUser + fmt.Sprintf("%x", secret[:4]), selfPass: fmt.Sprintf("%x", secret[4:])}
	var self net.Listener
	if cfg.TLS != nil {
		// The gateway dials its own broker here, in plain TCP on loopback
		// with its own login, so no certificate has to match an address.
		ln = tls.NewListener(ln, cfg.TLS)
		if self, err = net.Listen("tcp", "127.0.0.1:0"); err != nil {
			return nil, errors.Join(fmt.Errorf("broker: gateway listener: %w", err), ln.Close())
		}
		b.selfAddr = self.Addr().String()
	}
	closeLn := func() error {
		if self != nil {
			return errors.Join(ln.Close(), self.Close())
		}
		return ln.Close()
	}
	srv := mqtt.New(&mqtt.Options{Logger: log})
	b.srv = srv
	hook := newAuthHook(b.selfUser, b.selfPass, cfg.Username, cfg.Password, cfg.Prefix)
	if err := srv.AddHook(hook, nil); err != nil {
		return nil, errors.Join(fmt.Errorf("broker: auth hook: %w", err), closeLn())
	}
	if err := srv.AddListener(listeners.NewNet("gridloupe", ln)); err != nil {
		return nil, errors.Join(fmt.Errorf("broker: listener: %w", err), closeLn())
	}
	if self != nil {
		if err := srv.AddListener(listeners.NewNet("gridloupe-gateway", self)); err != nil {
			return nil, errors.Join(fmt.Errorf("broker: gateway listener: %w", err), closeLn())
		}
	}
	if err := srv.Serve(); err != nil {
		return nil, errors.Join(fmt.Errorf("broker: serve: %w", err), b.Close())
	}
	log.Info("embedded mqtt broker listening", "addr", b.addr, "tls", cfg.TLS != nil, "auth", cfg.Username != "")
	return b, nil
}

// exposure refuses a non-loopback host unless TLS and credentials are set.
func exposure(host string, cfg Config) error {
	if isLoopback(host) {
		return nil
	}
	var missing []string
	if cfg.TLS == nil {
		missing = append(missing, "TLS")
	}
	if cfg.Username == "" || cfg.Password == "" {
		missing = append(missing, "username and password")
	}
	if len(missing) == 0 {
		return nil
	}
	return fmt.Errorf("not loopback and no %s: %w", joinAnd(missing), ErrExposed)
}

func joinAnd(s []string) string {
	if len(s) == 2 {
		return s[0] + " and no " + s[1]
	}
	return s[0]
}

// isLoopback reports whether host names only the loopback interface. An
// empty host (all interfaces) and other names are not loopback.
func isLoopback(host string) bool {
	if host == "localhost" {
		return true
	}
	ip := net.ParseIP(host)
	return ip != nil && ip.IsLoopback()
}

// Addr returns the address the broker listens on, as host:port.
func (b *Broker) Addr() string { return b.addr }

// GatewayURL is where the gateway itself connects: plain TCP on loopback
// (the main listener, or with TLS a loopback listener of its own), so its
// connection needs no certificate matching the listen address.
func (b *Broker) GatewayURL() string { return "tcp://" + b.selfAddr }

// GatewayLogin returns the gateway's own login, made afresh at every Start
// and never written anywhere: the only client that may publish under
// Config.Prefix.
func (b *Broker) GatewayLogin() (user, pass string) { return b.selfUser, b.selfPass }

// Close stops the broker and disconnects its clients. It is idempotent.
func (b *Broker) Close() error {
	b.once.Do(func() { b.close = b.srv.Close() })
	return b.close
}

// authHook logs clients in and checks what they may do: the gateway (its
// own login) publishes and subscribes anywhere; a client with the
// configured login subscribes anywhere and publishes outside the prefix;
// without a configured login, other clients are anonymous and may only
// subscribe (loopback only: Start refuses otherwise).
type authHook struct {
	mqtt.HookBase
	self, selfPass [sha256.Size]byte
	user, pass     [sha256.Size]byte
	hasUser        bool
	prefix         string
}

func newAuthHook(selfUser, selfPass, user, pass, prefix string) *authHook {
	return &authHook{self: sha256.Sum256([]byte(selfUser)), selfPass: sha256.Sum256([]byte(selfPass)),
		user: sha256.Sum256([]byte(user)), pass: sha256.Sum256([]byte(pass)), hasUser: user != "", prefix: prefix}
}

// ID names the hook.
func (h *authHook) ID() string { return "gridloupe-auth" }

// Provides reports the hook methods implemented.
func (h *authHook) Provides(b byte) bool {
	return b == mqtt.OnConnectAuthenticate || b == mqtt.OnACLCheck
}

// match compares a login in constant time (over SHA-256 digests, so
// lengths do not leak either).
func match(u, p []byte, wantU, wantP *[sha256.Size]byte) bool {
	du, dp := sha256.Sum256(u), sha256.Sum256(p)
	return subtle.ConstantTimeCompare(du[:], wantU[:])&subtle.ConstantTimeCompare(dp[:], wantP[:]) == 1
}

// OnConnectAuthenticate admits the gateway, the configured login, or,
// without one, an anonymous client (no user name, no password).
func (h *authHook) OnConnectAuthenticate(_ *mqtt.Client, pk packets.Packet) bool {
	u, p := pk.Connect.Username, pk.Connect.Password
	switch {
	case match(u, p, &h.self, &h.selfPass):
		return true
	case h.hasUser:
		return match(u, p, &h.user, &h.pass)
	}
	return len(u) == 0 && len(p) == 0
}

// OnACLCheck lets every admitted client subscribe; the gateway publishes
// anywhere, a logged-in client outside the prefix, an anonymous one nowhere.
func (h *authHook) OnACLCheck(cl *mqtt.Client, topic string, write bool) bool {
	if !write {
		return true
	}
	u := sha256.Sum256(cl.Properties.Username)
	if subtle.ConstantTimeCompare(u[:], h.self[:]) == 1 {
		return true // the login was checked at connect
	}
	if !h.hasUser || len(cl.Properties.Username) == 0 {
		return false
	}
	return h.prefix != "" && topic != h.prefix && !strings.HasPrefix(topic, h.prefix+"/")
}
