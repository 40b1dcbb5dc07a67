package main

import (
	"context"
	"flag"
	"fmt"
	"io"
	"log/slog"
	"math"
	"sync"

	"github.com/gridloupe/gridloupe/cmd/internal/replaycmd"
	"github.com/gridloupe/gridloupe/config"
	"github.com/gridloupe/gridloupe/metrics"
	"github.com/gridloupe/gridloupe/store"
	"github.com/gridloupe/gridloupe/stream/live"
	"github.com/gridloupe/gridloupe/stream/modbus"
	"github.com/gridloupe/gridloupe/stream/web"
)

const modbusMapHelp = `Usage: gridloupe modbus-map --config FILE

Prints the Modbus TCP register map of the configuration as CSV with the
header address,quantity,unit,level,type, for a BMS integrator's import:
address is 0-based (as the protocol carries it; many BMS tools number
input registers from 30001 = address 0), quantity the record's key path,
level 3s or 10min (empty for the header and alarm registers), type float32
(two registers, IEEE-754, in the configured word_order) or uint16. Every
value is an input register (function 04). The map depends on the channels,
wiring, harmonics, il_a and alarm rules, so print it again after changing
them; register 0 holds the layout version.

Flags:
`

func cmdModbusMap(args []string, stdout io.Writer) error {
	fs := flag.NewFlagSet("modbus-map", flag.ContinueOnError)
	cfgPath := fs.String("config", "", "config `FILE` (YAML); required")
	fs.Usage = func() {
		fmt.Fprint(fs.Output(), modbusMapHelp)
		fs.PrintDefaults()
	}
	if err := parseFlags(fs, args, stdout); err != nil {
		return err
	}
	if *cfgPath == "" || fs.NArg() != 0 {
		return usagef("modbus-map: --config FILE is required and takes no arguments")
	}
	cfg, err := config.Load(*cfgPath)
	if err != nil {
		return &usageError{Err: err}
	}
	setup, _, err := replaycmd.SetupFromConfig(cfg)
	if err != nil {
		return err
	}
	m, err := registerMap(cfg, setup)
	if err != nil {
		return err
	}
	return m.WriteCSV(stdout)
}

func registerMap(cfg *config.Config, setup *metrics.Setup) (*modbus.Map, error) {
	names := make([]string, len(cfg.Alarms))
	for i, a := range cfg.Alarms {
		names[i] = a.Name
	}
	m, err := modbus.NewMap(setup, names, energyCircuits(cfg), cfg.Modbus.WordOrder == config.WordLowFirst)
	if err != nil {
		return nil, usagef("%s: modbus: %v", cfg.Path, err)
	}
	return m, nil
}

// integration runs the servers the config asks for (Modbus TCP, HTTP)
// on a board the gateway feeds with each aggregate.
type integration struct {
	board  *live.Board
	energy *energyKeeper
	cancel context.CancelFunc
	wg     sync.WaitGroup
}

// startIntegration listens on the configured addresses (so a busy port is
// a start-up error) and serves until Close.
func startIntegration(cfg *config.Config, setup *metrics.Setup, db *store.DB, base string, kick func(),
	health func() live.Health, log *slog.Logger) (*integration, error) {
	in := &integration{board: live.New(setup, nil, health)}
	ek, err := newEnergyKeeper(cfg, setup, db, in.board, base, kick, log.With("component", "energy"))
	if err != nil {
		return nil, err
	}
	in.energy = ek
	ctx, cancel := context.WithCancel(context.Background())
	in.cancel = cancel
	if cfg.Modbus.Enabled {
		m, err := registerMap(cfg, setup)
		if err != nil {
			cancel()
			return nil, err
		}
		srv, err := modbus.New(modbus.Config{Addr: cfg.Modbus.Listen, UnitID: uint8(cfg.Modbus.UnitID),
			LowFirst: cfg.Modbus.WordOrder == config.WordLowFirst, Board: in.board, Map: m, Logger: log.With("component", "modbus")})
		if err == nil {
			err = srv.Listen()
		}
		if err != nil {
			cancel()
			return nil, fmt.Errorf("modbus: %w", err)
		}
		log.Info("Modbus TCP server listening", "addr", srv.Addr(), "unit_id", cfg.Modbus.UnitID, "word_order", cfg.Modbus.WordOrder)
		in.wg.Add(1)
		go func() {
			defer in.wg.Done()
			if err := srv.Run(ctx); err != nil {
				log.Warn("modbus server stopped", "err", err)
			}
		}()
	}
	if cfg.HTTP.Enabled {
		alarms := make([]web.Alarm, len(cfg.Alarms))
		for i, a := range cfg.Alarms {
			alarms[i] = web.Alarm{Name: a.Name, Severity: a.Severity}
		}
		srv, err := web.New(web.Config{Addr: cfg.HTTP.Listen, Board: in.board, Site: cfg.Site, Gateway: cfg.Gateway,
			Alarms: alarms, BusV: busVoltage(cfg), IscOverIL: iscOverIL(cfg), IL: cfg.ILA, Logger: log.With("component", "http")})
		if err == nil {
			err = srv.Listen()
		}
		if err != nil {
			cancel()
			in.wg.Wait()
			return nil, fmt.Errorf("http: %w", err)
		}
		log.Info("HTTP listening (/, /metrics, /api/latest)", "addr", srv.Addr())
		in.wg.Add(1)
		go func() {
			defer in.wg.Done()
			if err := srv.Run(ctx); err != nil {
				log.Warn("http server stopped", "err", err)
			}
		}()
	}
	return in, nil
}

// busVoltage is the bus voltage that selects the IEEE 519 Table 1 row:
// line-to-line for wye (√3 × the declared phase-to-neutral voltage).
func busVoltage(cfg *config.Config) float64 {
	if cfg.Wiring == config.WiringSinglePhase {
		return cfg.Nominal.VoltageV
	}
	return cfg.Nominal.VoltageV * math.Sqrt(3)
}

// iscOverIL is the ratio that selects the Table 2 row; NaN when unknown.
func iscOverIL(cfg *config.Config) float64 {
	if cfg.IscA > 0 && cfg.ILA > 0 {
		return cfg.IscA / cfg.ILA
	}
	return math.NaN()
}

// onRecord feeds the board and then calls next (the demo's hook), if any.
func (in *integration) onRecord(next func(r *metrics.Record, active []string)) func(r *metrics.Record, active []string) {
	return func(r *metrics.Record, active []string) {
		in.board.Put(r, active)
		in.energy.record(r)
		if next != nil {
			next(r, active)
		}
	}
}

// onWindow is the gateway's per-window hook (energy).
func (in *integration) onWindow(r *metrics.Record) { in.energy.window(r) }

// Close stops the servers, waits for them and saves the energy counters
// (the gateway has stopped by then, so this is the last write of them).
func (in *integration) Close() {
	in.cancel()
	in.wg.Wait()
	in.energy.save()
}

// daemonHealth reads the gateway's health for the servers.
func daemonHealth(d *daemon, db *store.DB) live.Health {
	var h live.Health
	if d.gw != nil {
		st := d.gw.Stats()
		h.RecordsStored, h.RecordsDropped, h.Windows, h.StoreErrors = st.Stored, st.Dropped, st.Windows, st.StoreErrors
	}
	st := db.Stats()
	h.StoreBytes = st.FileBytes
	for _, n := range st.Outbox {
		h.OutboxDepth += n
	}
	if d.pub != nil {
		h.MQTTConnected = d.pub.Connected()
	}
	return h
}
