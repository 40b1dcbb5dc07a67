package modbus

import (
	"context"
	"fmt"
	"log"
	"log/slog"
	"math"
	"net"
	"time"

	mb "github.com/simonvetter/modbus"

	"github.com/gridloupe/gridloupe/metrics"
	"github.com/gridloupe/gridloupe/stream/live"
)

// Config configures a Server.
type Config struct {
	Addr     string      // host:port to listen on, e.g. 127.0.0.1:5020; required
	UnitID   uint8       // unit identifier answered (0 and 255 are answered too); 0 = 1
	LowFirst bool        // float32 low word first; false = high word first (the common order)
	Board    *live.Board // the values; required
	Map      *Map        // the register map; required
	// MaxClients bounds concurrent connections; 0 = 8.
	MaxClients uint
	// Idle closes a connection silent this long; 0 = 2 min.
	Idle   time.Duration
	Logger *slog.Logger // nil = discard
}

// Server answers Modbus TCP requests from the board. Use it once: Run.
// It is safe for concurrent use by the library's connection goroutines.
type Server struct {
	cfg Config
	log *slog.Logger
	ln  *mb.ModbusServer
	// Addr is the address actually bound (useful with port 0), valid after
	// Listen.
	addr string
}

// New checks cfg.
func New(cfg Config) (*Server, error) {
	if cfg.Board == nil || cfg.Map == nil || cfg.Addr == "" {
		return nil, fmt.Errorf("%w: addr, board and map are required", ErrListen)
	}
	if cfg.UnitID == 0 {
		cfg.UnitID = 1
	}
	if cfg.MaxClients == 0 {
		cfg.MaxClients = 8
	}
	if cfg.Idle <= 0 {
		cfg.Idle = 2 * time.Minute
	}
	s := &Server{cfg: cfg, log: cfg.Logger}
	if s.log == nil {
		s.log = slog.New(slog.DiscardHandler)
	}
	return s, nil
}

// Listen binds the address. With port 0 a free port is chosen; Addr
// returns it.
func (s *Server) Listen() error {
	addr := s.cfg.Addr
	if _, port, err := net.SplitHostPort(addr); err == nil && port == "0" {
		// The library binds by URL; find a free port first (tests).
		l, err := net.Listen("tcp", addr)
		if err != nil {
			return fmt.Errorf("%w: %s: %w", ErrListen, addr, err)
		}
		addr = l.Addr().String()
		l.Close()
	}
	srv, err := mb.NewServer(&mb.ServerConfiguration{URL: "tcp://" + addr, Timeout: s.cfg.Idle,
		MaxClients: s.cfg.MaxClients, Logger: log.New(slogWriter{s.log}, "", 0)}, s)
	if err != nil {
		return fmt.Errorf("%w: %s: %w", ErrListen, addr, err)
	}
	if err := srv.Start(); err != nil {
		return fmt.Errorf("%w: %s: %w", ErrListen, addr, err)
	}
	s.ln, s.addr = srv, addr
	return nil
}

// Addr returns the bound address.
func (s *Server) Addr() string { return s.addr }

// Run serves until ctx ends (Listen first, or Run listens itself), then
// closes every connection. It returns nil on cancellation.
func (s *Server) Run(ctx context.Context) error {
	if s.ln == nil {
		if err := s.Listen(); err != nil {
			return err
		}
	}
	<-ctx.Done()
	return s.ln.Stop()
}

// slogWriter passes the library's log lines to slog at debug level: they
// are per-connection chatter (client connected, closed).
type slogWriter struct{ log *slog.Logger }

func (w slogWriter) Write(p []byte) (int, error) {
	w.log.Debug("modbus library", "msg", string(p))
	return len(p), nil
}

func (s *Server) unitOK(id uint8) bool { return id == s.cfg.UnitID || id == 0 || id == 255 }

// HandleCoils refuses: the server has no coils.
func (s *Server) HandleCoils(*mb.CoilsRequest) ([]bool, error) { return nil, mb.ErrIllegalFunction }

// HandleDiscreteInputs refuses: alarm bits are input registers.
func (s *Server) HandleDiscreteInputs(*mb.DiscreteInputsRequest) ([]bool, error) {
	return nil, mb.ErrIllegalFunction
}

// HandleHoldingRegisters refuses reads and writes: the map is read-only
// and lives in the input registers.
func (s *Server) HandleHoldingRegisters(*mb.HoldingRegistersRequest) ([]uint16, error) {
	return nil, mb.ErrIllegalFunction
}

// HandleInputRegisters answers function 04 from the map.
func (s *Server) HandleInputRegisters(req *mb.InputRegistersRequest) ([]uint16, error) {
	if !s.unitOK(req.UnitId) {
		return nil, mb.ErrGWTargetFailedToRespond
	}
	return s.read(req.Addr, req.Quantity)
}

// read encodes quantity registers from addr. The range must start and end
// on whole values and hold no unmapped register.
func (s *Server) read(addr, quantity uint16) ([]uint16, error) {
	m := s.cfg.Map
	end := uint32(addr) + uint32(quantity)
	if quantity == 0 || end > 1<<16 {
		return nil, mb.ErrIllegalDataAddress
	}
	out := make([]uint16, 0, quantity)
	var recs [2]*metrics.Record
	var ages [2]float64
	var got [2]bool
	for a := uint32(addr); a < end; {
		ref, ok := m.regs[uint16(a)]
		if !ok || ref.word != 0 {
			return nil, mb.ErrIllegalDataAddress
		}
		e := &m.Entries[ref.entry]
		n := uint32(e.Type.Regs())
		if a+n > end {
			return nil, mb.ErrIllegalDataAddress // would split a float32
		}
		var r *metrics.Record
		var age float64
		if li := levelSlot(e.Level); li >= 0 {
			if !got[li] {
				recs[li], _ = s.cfg.Board.Latest(e.Level)
				ages[li], _ = s.cfg.Board.Age(e.Level)
				got[li] = true
			}
			r, age = recs[li], ages[li]
		}
		f, u := e.value(s.cfg.Board, r, age)
		if e.Type == Uint16 {
			out = append(out, u)
		} else {
			out = appendFloat(out, f, s.cfg.LowFirst)
		}
		a += n
	}
	return out, nil
}

func levelSlot(iv metrics.Interval) int {
	for i, l := range live.Levels() {
		if l == iv {
			return i
		}
	}
	return -1
}

// appendFloat appends v as IEEE-754 binary32 in two registers; NaN (an
// undefined value) is the quiet NaN 0x7FC00000.
func appendFloat(dst []uint16, v float64, lowFirst bool) []uint16 {
	bits := math.Float32bits(float32(v))
	if v != v {
		bits = 0x7FC00000
	}
	hi, lo := uint16(bits>>16), uint16(bits)
	if lowFirst {
		return append(dst, lo, hi)
	}
	return append(dst, hi, lo)
}
