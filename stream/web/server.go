package web

import (
	"context"
	_ "embed"
	"errors"
	"fmt"
	"log/slog"
	"math"
	"net"
	"net/http"
	"strconv"
	"time"

	"github.com/gridloupe/gridloupe/metrics/limits"
	"github.com/gridloupe/gridloupe/stream/encode"
	"github.com/gridloupe/gridloupe/stream/live"
)

//go:embed status.html
var statusPage []byte

// Alarm names one alarm rule for /metrics and the status page.
type Alarm struct {
	Name, Severity string
}

// Config configures a Server.
type Config struct {
	Addr          string      // host:port, e.g. 127.0.0.1:8080; required
	Board         *live.Board // required
	Site, Gateway string
	Alarms        []Alarm // the configured rules, config order
	// BusV selects the IEEE 519 Table 1 row (line-to-line for wye); 0 =
	// no voltage limits on the page. IscOverIL selects the Table 2 row; 0
	// or NaN = the strictest row. IL 0 = no current limits.
	BusV, IscOverIL, IL float64
	Logger              *slog.Logger // nil = discard
}

// Server is the HTTP listener. Run it once. Safe for concurrent use.
type Server struct {
	cfg  Config
	log  *slog.Logger
	ln   net.Listener
	srv  *http.Server
	lims []byte // the limits object of /api/latest, fixed at New
	col  *collector
}

// New checks cfg and builds the handlers.
func New(cfg Config) (*Server, error) {
	if cfg.Addr == "" || cfg.Board == nil {
		return nil, fmt.Errorf("%w: addr and board are required", ErrListen)
	}
	s := &Server{cfg: cfg, log: cfg.Logger}
	if s.log == nil {
		s.log = slog.New(slog.DiscardHandler)
	}
	s.col = newCollector(&s.cfg)
	mux := http.NewServeMux()
	mux.HandleFunc("GET /metrics", s.metrics)
	mux.HandleFunc("GET /api/latest", s.latest)
	mux.HandleFunc("GET /{$}", func(w http.ResponseWriter, _ *http.Request) {
		w.Header().Set("Content-Type", "text/html; charset=utf-8")
		w.Header().Set("Content-Security-Policy", "default-src 'self'; script-src 'unsafe-inline'; style-src 'unsafe-inline'; img-src data:")
		_, _ = w.Write(statusPage)
	})
	s.srv = &http.Server{Handler: mux, ReadHeaderTimeout: 5 * time.Second, ReadTimeout: 10 * time.Second,
		WriteTimeout: 20 * time.Second, IdleTimeout: 2 * time.Minute}
	s.lims = s.limitsJSON()
	return s, nil
}

// metrics writes the board in the Prometheus text exposition format.
func (s *Server) metrics(w http.ResponseWriter, _ *http.Request) {
	b, dup := appendExposition(nil, s.col.collect())
	if dup > 0 {
		s.log.Warn("metrics exposition: series with the same labels dropped", "count", dup)
	}
	w.Header().Set("Content-Type", expoContentType)
	_, _ = w.Write(b)
}

// Listen binds the address (port 0 picks a free one).
func (s *Server) Listen() error {
	ln, err := net.Listen("tcp", s.cfg.Addr)
	if err != nil {
		return fmt.Errorf("%w: %s: %w", ErrListen, s.cfg.Addr, err)
	}
	s.ln = ln
	return nil
}

// Addr returns the bound address after Listen.
func (s *Server) Addr() string { return s.ln.Addr().String() }

// Run serves until ctx ends, then shuts down within a few seconds. It
// returns nil on cancellation.
func (s *Server) Run(ctx context.Context) error {
	if s.ln == nil {
		if err := s.Listen(); err != nil {
			return err
		}
	}
	errc := make(chan error, 1)
	go func() { errc <- s.srv.Serve(s.ln) }()
	select {
	case err := <-errc:
		return fmt.Errorf("web: %w", err)
	case <-ctx.Done():
	}
	sctx, cancel := context.WithTimeout(context.Background(), 3*time.Second)
	defer cancel()
	err := s.srv.Shutdown(sctx)
	if e := <-errc; !errors.Is(e, http.ErrServerClosed) && err == nil {
		err = e
	}
	return err
}

// limitsJSON is the IEEE 519 limits object the page draws against.
func (s *Server) limitsJSON() []byte {
	b := []byte(`{"edition":`)
	b = encode.AppendString(b, limits.Edition)
	vi, vt := limits.VoltageLimits(s.cfg.BusV)
	b = append(b, `,"bus_v":`...)
	b = num(b, s.cfg.BusV)
	b = append(b, `,"voltage_individual_pct":`...)
	b = num(b, vi)
	b = append(b, `,"voltage_thd_pct":`...)
	b = num(b, vt)
	if s.cfg.IL > 0 {
		row := limits.CurrentLimits(s.cfg.IscOverIL)
		b = append(b, `,"il_a":`...)
		b = num(b, s.cfg.IL)
		b = append(b, `,"current_row":`...)
		b = encode.AppendString(b, row.RatioLabel)
		b = append(b, `,"tdd_pct":`...)
		b = num(b, row.TDD)
		b = append(b, `,"current_pct":[`...)
		for h := 0; h <= limits.MaxOrder; h++ {
			if h > 0 {
				b = append(b, ',')
			}
			b = num(b, limits.IndividualCurrentLimit(row, h))
		}
		b = append(b, ']')
	}
	return append(b, '}')
}

// num appends v, null when it is not finite.
func num(b []byte, v float64) []byte {
	if math.IsNaN(v) || math.IsInf(v, 0) {
		return append(b, "null"...)
	}
	return encode.AppendNumber(b, v)
}

// latest writes the board as JSON: the newest record of each level in the
// replay schema with its age, the alarms, the health, recent events, the
// channels and the limits.
func (s *Server) latest(w http.ResponseWriter, _ *http.Request) {
	bd := s.cfg.Board
	b := []byte(`{"site":`)
	b = encode.AppendString(b, s.cfg.Site)
	b = append(b, `,"gateway":`...)
	b = encode.AppendString(b, s.cfg.Gateway)
	b = append(b, `,"time":"`...)
	b = encode.AppendTime(b, bd.Now().UTC())
	b = append(b, `","channels":[`...)
	for i, ch := range bd.Setup().Channels {
		if i > 0 {
			b = append(b, ',')
		}
		b = append(b, `{"name":`...)
		b = encode.AppendString(b, ch.Name)
		b = append(b, `,"kind":"`...)
		b = append(b, ch.Kind.String()...)
		b = append(b, `","phase":"`...)
		b = append(b, ch.Phase)
		b = append(b, `"}`...)
	}
	b = append(b, `],"levels":{`...)
	for i, iv := range live.Levels() {
		if i > 0 {
			b = append(b, ',')
		}
		b = append(b, '"')
		b = append(b, iv.String()...)
		b = append(b, `":`...)
		r, _ := bd.Latest(iv)
		if r == nil {
			b = append(b, "null"...)
			continue
		}
		age, _ := bd.Age(iv)
		b = append(b, `{"age_s":`...)
		b = num(b, age)
		b = append(b, `,"record":`...)
		b = encode.AppendJSON(b, bd.Setup(), r)
		b = append(b, '}')
	}
	b = append(b, `},"alarms":[`...)
	active := bd.Active()
	for i, a := range s.cfg.Alarms {
		if i > 0 {
			b = append(b, ',')
		}
		raised := false
		for _, n := range active {
			raised = raised || n == a.Name
		}
		b = append(b, `{"name":`...)
		b = encode.AppendString(b, a.Name)
		b = append(b, `,"severity":`...)
		b = encode.AppendString(b, a.Severity)
		b = append(b, `,"raised":`...)
		b = strconv.AppendBool(b, raised)
		b = append(b, '}')
	}
	h := bd.Health()
	b = append(b, `],"health":{"records_stored":`...)
	b = strconv.AppendUint(b, h.RecordsStored, 10)
	b = append(b, `,"records_dropped":`...)
	b = strconv.AppendUint(b, h.RecordsDropped, 10)
	b = append(b, `,"outbox_messages":`...)
	b = strconv.AppendInt(b, int64(h.OutboxDepth), 10)
	b = append(b, `,"store_bytes":`...)
	b = strconv.AppendInt(b, h.StoreBytes, 10)
	b = append(b, `,"store_errors":`...)
	b = strconv.AppendUint(b, h.StoreErrors, 10)
	b = append(b, `,"mqtt_connected":`...)
	b = strconv.AppendBool(b, h.MQTTConnected)
	b = append(b, `},"events":[`...)
	evs, why := bd.Events()
	for i, e := range evs {
		if i > 0 {
			b = append(b, ',')
		}
		b = append(b, `{"event":`...)
		b = encode.AppendString(b, e.Kind)
		b = append(b, `,"start":"`...)
		b = encode.AppendTime(b, e.Start)
		b = append(b, `","duration_s":`...)
		b = num(b, e.DurationS)
		b = append(b, `,"extreme_pct":`...)
		b = num(b, e.ExtremePct)
		b = append(b, '}')
	}
	b = append(b, `],"events_note":`...)
	if len(evs) > 0 {
		why = ""
	}
	b = encode.AppendString(b, why)
	b = append(b, `,"energy":`...)
	if e := bd.Energy(); e.Valid {
		b = live.AppendEnergyJSON(b, e)
	} else {
		b = append(b, "null"...)
	}
	b = append(b, `,"limits":`...)
	b = append(b, s.lims...)
	b = append(b, '}')
	w.Header().Set("Content-Type", "application/json")
	w.Header().Set("Cache-Control", "no-store")
	_, _ = w.Write(b)
}
