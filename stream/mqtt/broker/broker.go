package broker

import (
	"crypto/sha256"
	"crypto/subtle"
	"crypto/tls"
	"errors"
	"fmt"
	"log/slog"
	"net"
	"sync"

	mqtt "github.com/mochi-mqtt/server/v2"
	"github.com/mochi-mqtt/server/v2/listeners"
	"github.com/mochi-mqtt/server/v2/packets"
)

// DefaultAddr is where the broker listens when Config.Addr is empty.
const DefaultAddr = "127.0.0.1:1883"

// Config configures Start.
type Config struct {
	Addr     string       // host:port; "" = 127.0.0.1:1883; port 0 picks a free port
	Username string       // with Password: every client must present both; "" = allow all (loopback only)
	Password string       // never logged
	TLS      *tls.Config  // server TLS with a certificate; nil = plain TCP (loopback only)
	Logger   *slog.Logger // nil = discard
}

// Broker is a running embedded broker. Its methods are safe for concurrent use.
type Broker struct {
	srv   *mqtt.Server
	addr  string
	once  sync.Once
	close error
}

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

	ln, err := net.Listen("tcp", addr)
	if err != nil {
		return nil, fmt.Errorf("broker: listen %s: %w", addr, err)
	}
	if cfg.TLS != nil {
		ln = tls.NewListener(ln, cfg.TLS)
	}
	srv := mqtt.New(&mqtt.Options{Logger: log})
	var hook mqtt.Hook = new(allowHook)
	if cfg.Username != "" {
		hook = newCredHook(cfg.Username, cfg.Password)
	}
	b := &Broker{srv: srv, addr: ln.Addr().String()}
	if err := srv.AddHook(hook, nil); err != nil {
		return nil, errors.Join(fmt.Errorf("broker: auth hook: %w", err), ln.Close())
	}
	if err := srv.AddListener(listeners.NewNet("gridloupe", ln)); err != nil {
		return nil, errors.Join(fmt.Errorf("broker: listener: %w", err), ln.Close())
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

// Close stops the broker and disconnects its clients. It is idempotent.
func (b *Broker) Close() error {
	b.once.Do(func() { b.close = b.srv.Close() })
	return b.close
}

// allowHook lets every client connect, publish and subscribe; Start uses it
// only on loopback without credentials. (mochi's hooks/auth has the same
// hook, but importing it pulls in a YAML module this repository does not use.)
type allowHook struct{ mqtt.HookBase }

// ID names the hook.
func (h *allowHook) ID() string { return "gridloupe-allow-loopback" }

// Provides reports the hook methods implemented.
func (h *allowHook) Provides(b byte) bool {
	return b == mqtt.OnConnectAuthenticate || b == mqtt.OnACLCheck
}

// OnConnectAuthenticate allows every client.
func (h *allowHook) OnConnectAuthenticate(*mqtt.Client, packets.Packet) bool { return true }

// OnACLCheck allows every topic.
func (h *allowHook) OnACLCheck(*mqtt.Client, string, bool) bool { return true }

// credHook checks every client's username and password.
type credHook struct {
	mqtt.HookBase
	user, pass [sha256.Size]byte
}

func newCredHook(user, pass string) *credHook {
	return &credHook{user: sha256.Sum256([]byte(user)), pass: sha256.Sum256([]byte(pass))}
}

// ID names the hook.
func (h *credHook) ID() string { return "gridloupe-credentials" }

// Provides reports the hook methods implemented.
func (h *credHook) Provides(b byte) bool {
	return b == mqtt.OnConnectAuthenticate || b == mqtt.OnACLCheck
}

// OnConnectAuthenticate compares the credentials in constant time (over
// their SHA-256 digests, so lengths do not leak either).
func (h *credHook) OnConnectAuthenticate(_ *mqtt.Client, pk packets.Packet) bool {
	u := sha256.Sum256(pk.Connect.Username)
	p := sha256.Sum256(pk.Connect.Password)
	return subtle.ConstantTimeCompare(u[:], h.user[:])&subtle.ConstantTimeCompare(p[:], h.pass[:]) == 1
}

// OnACLCheck lets an authenticated client publish and subscribe anywhere.
func (h *credHook) OnACLCheck(*mqtt.Client, string, bool) bool { return true }
