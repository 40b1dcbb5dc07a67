package modbus

import (
	"bytes"
	"context"
	"encoding/csv"
	"math"
	"strconv"
	"testing"
	"time"

	mb "github.com/simonvetter/modbus"

	"github.com/gridloupe/gridloupe/metrics"
	"github.com/gridloupe/gridloupe/metrics/metricstest"
	"github.com/gridloupe/gridloupe/stream/live"
)

// Set-up shared by the server's tests and benchmark: a three-phase setup,
// an invented record, a running server on a loopback port with its board,
// a library client, the map's CSV as an integrator reads it, and the
// float32 comparison the value tables use.

// f32Rel is the relative rounding step of IEEE-754 binary32 (24-bit
// significand: half an ulp is 2^-24 of the value; IEEE 754-2008 §3.6).
const f32Rel = 1.0 / (1 << 23)

// northWeir is an invented 3 s record of the North Weir DC-2 cabinet
// (DESIGN.md scenario) at awkward values.
func northWeir(s *metrics.Setup) *metrics.Record {
	r := metrics.NewRecord(s)
	r.Interval, r.Start, r.DurationS = metrics.Int3s, time.Date(2026, 3, 1, 10, 0, 3, 0, time.UTC), 3
	r.FreqHz = 50.02
	r.Flags = metrics.FlagPartial
	for i := range r.Channels {
		r.Channels[i].RMS = 229.87 + float64(i)
		r.Channels[i].THDPct = 2.085
		r.Channels[i].THDH50Pct = 2.07
		r.Channels[i].TDDPct = metrics.Null()
		r.Channels[i].TDDH50Pct = 8.56
	}
	for i := range r.Phases {
		r.Phases[i].P, r.Phases[i].Q1, r.Phases[i].S, r.Phases[i].PF, r.Phases[i].DPF = 10330, -2190, 11020, 0.937, 0.978
	}
	r.Total = metrics.TotalValues{P: 30990, Q1: 6570, S: 33060, Se: 33100, Ve: 230.05, Ie: 47.9, PF: 0.936, DPF: 0.978}
	r.UnbV, r.UnbI = 0.39, 0.87
	return r
}

type rig struct {
	board *live.Board
	m     *Map
	addr  string
	now   time.Time
}

func startServer(t testing.TB, lowFirst bool, alarms []string) *rig {
	t.Helper()
	s := metricstest.Wye(t)
	rg := &rig{now: time.Date(2026, 3, 1, 10, 0, 10, 0, time.UTC)}
	rg.board = live.New(s, func() time.Time { return rg.now }, nil)
	m, err := NewMap(s, alarms, []string{"main"}, lowFirst)
	if err != nil {
		t.Fatal(err)
	}
	rg.m = m
	srv, err := New(Config{Addr: "127.0.0.1:0", UnitID: 7, LowFirst: lowFirst, Board: rg.board, Map: m})
	if err != nil {
		t.Fatal(err)
	}
	if err := srv.Listen(); err != nil {
		t.Fatal(err)
	}
	rg.addr = srv.Addr()
	ctx, cancel := context.WithCancel(context.Background())
	done := make(chan error, 1)
	go func() { done <- srv.Run(ctx) }()
	t.Cleanup(func() {
		cancel()
		if err := <-done; err != nil {
			t.Error(err)
		}
	})
	return rg
}

func client(t testing.TB, addr string, lowFirst bool, unit uint8) *mb.ModbusClient {
	t.Helper()
	c, err := mb.NewClient(&mb.ClientConfiguration{URL: "tcp://" + addr, Timeout: 2 * time.Second})
	if err != nil {
		t.Fatal(err)
	}
	if err := c.Open(); err != nil {
		t.Fatal(err)
	}
	t.Cleanup(func() { c.Close() })
	wo := mb.HIGH_WORD_FIRST
	if lowFirst {
		wo = mb.LOW_WORD_FIRST
	}
	if err := c.SetEncoding(mb.BIG_ENDIAN, wo); err != nil {
		t.Fatal(err)
	}
	if err := c.SetUnitId(unit); err != nil {
		t.Fatal(err)
	}
	return c
}

// addressOf finds a quantity's address in the CSV the map prints, as an
// integrator would.
func addressOf(t *testing.T, m *Map, quantity, level string) uint16 {
	t.Helper()
	var buf bytes.Buffer
	if err := m.WriteCSV(&buf); err != nil {
		t.Fatal(err)
	}
	rows, err := csv.NewReader(&buf).ReadAll()
	if err != nil {
		t.Fatal(err)
	}
	for _, row := range rows[1:] {
		if row[1] == quantity && row[3] == level {
			a, err := strconv.Atoi(row[0])
			if err != nil {
				t.Fatal(err)
			}
			return uint16(a)
		}
	}
	t.Fatalf("%s at %s not in the map", quantity, level)
	return 0
}

// floatCase is one float32 value a test reads: the quantity, the value
// expected and where that value comes from.
type floatCase struct {
	q    string
	want float64
	src  string
}

// checkFloats reads each case's quantity at level (the map's level column;
// "" for values outside the 3 s and 10 min blocks) and checks it within
// binary32 rounding of want.
func checkFloats(t *testing.T, c *mb.ModbusClient, m *Map, level string, cases []floatCase) {
	t.Helper()
	for _, tc := range cases {
		got, err := c.ReadFloat32(addressOf(t, m, tc.q, level), mb.INPUT_REGISTER)
		if err != nil {
			t.Errorf("%s: %v (src: %s)", tc.q, err, tc.src)
			continue
		}
		if math.Abs(float64(got)-tc.want) > f32Rel*math.Abs(tc.want) {
			t.Errorf("%s = %v, want %v within binary32 rounding (src: %s)", tc.q, got, tc.want, tc.src)
		}
	}
}
