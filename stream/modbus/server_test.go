package modbus

import (
	"bytes"
	"encoding/csv"
	"errors"
	"math"
	"strconv"
	"testing"
	"time"

	mb "github.com/simonvetter/modbus"

	"github.com/gridloupe/gridloupe/metrics"
	"github.com/gridloupe/gridloupe/metrics/energy"
	"github.com/gridloupe/gridloupe/metrics/metricstest"
	"github.com/gridloupe/gridloupe/stream/live"
)

func TestReadValues(t *testing.T) {
	for _, lowFirst := range []bool{false, true} {
		t.Run("low_first="+strconv.FormatBool(lowFirst), func(t *testing.T) {
			rg := startServer(t, lowFirst, []string{"current-distortion", "pf-low"})
			c := client(t, rg.addr, lowFirst, 7)
			r := northWeir(rg.board.Setup())
			rg.board.Put(r, []string{"pf-low"})
			rg.now = rg.now.Add(2500 * time.Millisecond)
			checkFloats(t, c, rg.m, "3s", []floatCase{
				{"freq_hz", 50.02, "the record put on the board (invented, DESIGN.md scenario)"},
				{"total.pf", 0.936, "same record"},
				{"total.q_var", 6570, "same record"},
				{"phase.b.q_var", -2190, "same record: a leading (capacitive) phase is negative (DESIGN.md q_var sign)"},
				{"phase.c.dpf", 0.978, "same record"},
				{"vc.rms", 231.87, "same record: channel 2"},
				{"ia.tdd_h50_pct", 8.56, "same record"},
				{"unbalance.current_pct", 0.87, "same record"},
				{"age_s", 2.5, "the board's clock moved 2.5 s after the record arrived"},
			})
			// A null value reads as NaN; the 10 min block before its first record too.
			if v, err := c.ReadFloat32(addressOf(t, rg.m, "ia.tdd_pct", "3s"), mb.INPUT_REGISTER); err != nil || !math.IsNaN(float64(v)) {
				t.Errorf("null ia.tdd_pct = %v, %v; want NaN (src: README BMS integration: null is NaN)", v, err)
			}
			if v, err := c.ReadFloat32(addressOf(t, rg.m, "freq_hz", "10min"), mb.INPUT_REGISTER); err != nil || !math.IsNaN(float64(v)) {
				t.Errorf("10 min freq before any record = %v, %v; want NaN", v, err)
			}
			regs, err := c.ReadRegisters(0, 6, mb.INPUT_REGISTER)
			if err == nil {
				t.Errorf("read 0..5 across the unmapped register 3 = %v, want illegal data address", regs)
			}
			hdr, err := c.ReadRegisters(0, 3, mb.INPUT_REGISTER)
			if err != nil {
				t.Fatal(err)
			}
			wo := uint16(0)
			if lowFirst {
				wo = 1
			}
			if hdr[0] != LayoutVersion || hdr[1] != wo || hdr[2] != 1 {
				t.Errorf("header = %v, want [%d %d 1] (layout version, word order, one active alarm)", hdr, LayoutVersion, wo)
			}
			if v, err := c.ReadFloat32(4, mb.INPUT_REGISTER); err != nil || v != 1234.5 {
				t.Errorf("word-order check = %v, %v; want 1234.5 exactly (binary32 holds it exactly: 2469/2)", v, err)
			}
			bits, err := c.ReadRegisters(addressOf(t, rg.m, "alarm.current-distortion", ""), 2, mb.INPUT_REGISTER)
			if err != nil || bits[0] != 0 || bits[1] != 1 {
				t.Errorf("alarm registers = %v, %v; want [0 1] (pf-low raised)", bits, err)
			}
			flags, err := c.ReadRegister(addressOf(t, rg.m, "flags", "3s"), mb.INPUT_REGISTER)
			if err != nil || metrics.Flags(flags) != metrics.FlagPartial {
				t.Errorf("flags = %#x, %v; want the partial bit %#x", flags, err, metrics.FlagPartial)
			}
		})
	}
}

func TestReadEnergy(t *testing.T) {
	rg := startServer(t, false, nil)
	c := client(t, rg.addr, false, 7)
	imp := addressOf(t, rg.m, "energy.main.import_kwh", "")
	if v, err := c.ReadFloat32(imp, mb.INPUT_REGISTER); err != nil || !math.IsNaN(float64(v)) {
		t.Errorf("import before the gateway published energy = %v, %v; want NaN", v, err)
	}
	rg.board.SetEnergy(live.Energy{
		Readings: []energy.Reading{{Circuit: "main", Counters: energy.Counters{ImportWh: 123456.7, ExportWh: 8.25, VarhQ: [4]float64{2.5e4, 0, 0, 750}}}},
		Demand:   energy.Demand{A: [3]float64{120.4, 119.8, 121.1}, W: 71460, Month: energy.Month{MaxA: [3]float64{150.2, 149.9, 151.3}, MaxW: 98000}},
		ILConfig: 160, Estimate: energy.IL{A: 151.3}})
	checkFloats(t, c, rg.m, "", []floatCase{
		{"energy.main.import_kwh", 123.4567, "the board's 123456.7 Wh in kWh"},
		{"energy.main.export_kwh", 0.00825, "8.25 Wh in kWh"},
		{"energy.main.kvarh_q1", 25, "2.5e4 varh in kvarh"},
		{"energy.main.kvarh_q4", 0.75, "750 varh in kvarh"},
		{"demand.phase.c.i_a", 121.1, "the board's demand"},
		{"demand.total.p_w", 71460, "same"},
		{"demand.month_max.phase.c.i_a", 151.3, "same"},
		{"il_a", 160, "il_a from the config wins over the estimate"},
		{"il_estimate_a", 151.3, "the estimate"},
	})
}

func TestExceptions(t *testing.T) {
	rg := startServer(t, false, nil)
	c := client(t, rg.addr, false, 7)
	freq := addressOf(t, rg.m, "freq_hz", "3s")
	cases := []struct {
		name string
		call func() error
		want error
		src  string
	}{
		{"holding registers", func() error { _, err := c.ReadRegisters(freq, 2, mb.HOLDING_REGISTER); return err }, mb.ErrIllegalFunction,
			"Modbus application protocol: exception 01 for an unsupported function (REFERENCE.md §8)"},
		{"write", func() error { return c.WriteRegister(freq, 1) }, mb.ErrIllegalFunction, "same: the map is read-only"},
		{"coils", func() error { _, err := c.ReadCoils(0, 1); return err }, mb.ErrIllegalFunction, "same"},
		{"discrete inputs", func() error { _, err := c.ReadDiscreteInputs(0, 1); return err }, mb.ErrIllegalFunction, "same"},
		{"unmapped", func() error { _, err := c.ReadRegisters(3, 1, mb.INPUT_REGISTER); return err }, mb.ErrIllegalDataAddress,
			"exception 02 for an address outside the map (REFERENCE.md §8)"},
		{"second half of a float", func() error { _, err := c.ReadRegisters(freq+1, 2, mb.INPUT_REGISTER); return err }, mb.ErrIllegalDataAddress,
			"the map's rule: a read never splits a float32"},
		{"first half of a float", func() error { _, err := c.ReadRegisters(freq, 1, mb.INPUT_REGISTER); return err }, mb.ErrIllegalDataAddress, "same"},
		{"top of the address space", func() error { _, err := c.ReadRegisters(65534, 2, mb.INPUT_REGISTER); return err }, mb.ErrIllegalDataAddress, "same as unmapped"},
	}
	for _, tc := range cases {
		if err := tc.call(); !errors.Is(err, tc.want) {
			t.Errorf("%s: err = %v, want %v (src: %s)", tc.name, err, tc.want, tc.src)
		}
	}
	other := client(t, rg.addr, false, 9)
	if _, err := other.ReadRegisters(0, 1, mb.INPUT_REGISTER); !errors.Is(err, mb.ErrGWTargetFailedToRespond) {
		t.Errorf("unit 9: err = %v, want gateway target failed to respond (exception 0B; common practice, no source)", err)
	}
	any := client(t, rg.addr, false, 255)
	if v, err := any.ReadRegister(0, mb.INPUT_REGISTER); err != nil || v != LayoutVersion {
		t.Errorf("unit 255: %v, %v; want the layout version (255 and 0 address any unit over TCP; common practice, no source)", v, err)
	}
}

func TestMapCSV(t *testing.T) {
	m, err := NewMap(metricstest.Wye(t), []string{"pf,low"}, nil, false)
	if err != nil {
		t.Fatal(err)
	}
	var buf bytes.Buffer
	if err := m.WriteCSV(&buf); err != nil {
		t.Fatal(err)
	}
	rows, err := csv.NewReader(&buf).ReadAll()
	if err != nil {
		t.Fatalf("not RFC 4180 CSV: %v", err)
	}
	if h := rows[0]; len(h) != 5 || h[0] != "address" || h[1] != "quantity" || h[2] != "unit" || h[3] != "level" || h[4] != "type" {
		t.Fatalf("header %v, want address,quantity,unit,level,type (src: DESIGN.md Building and plant integration)", h)
	}
	want := map[string]bool{"freq_hz": true, "total.pf": true, "phase.a.dpf": true, "va.rms": true, "ia.tdd_h50_pct": true, "pf,low": false}
	next := -1
	for _, row := range rows[1:] {
		a, _ := strconv.Atoi(row[0])
		if a < next {
			t.Fatalf("address %d overlaps the value before it", a)
		}
		n := 1
		if row[4] == "float32" {
			n = 2
		}
		next = a + n
		if row[3] == "3s" {
			delete(want, row[1])
		}
		if row[1] == "alarm.pf,low" {
			delete(want, "pf,low")
		}
	}
	if len(want) != 0 {
		t.Errorf("missing from the map: %v (src: DESIGN.md key paths)", want)
	}
}
