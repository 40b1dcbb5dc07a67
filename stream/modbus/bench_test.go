package modbus

import (
	"testing"

	mb "github.com/simonvetter/modbus"
)

// BenchmarkPoll reads 100 registers of the 3 s block (50 float32 values,
// the whole block of the test map) over loopback with the library's
// client, as a BMS poll does.
func BenchmarkPoll(b *testing.B) {
	rg := startServer(b, false, nil)
	rg.board.Put(northWeir(rg.board.Setup()), nil)
	c := client(b, rg.addr, false, 7)
	b.ReportAllocs()
	var regs []uint16
	for b.Loop() {
		var err error
		if regs, err = c.ReadRegisters(1004, 100, mb.INPUT_REGISTER); err != nil {
			b.Fatal(err)
		}
	}
	if len(regs) != 100 {
		b.Fatalf("%d registers", len(regs))
	}
}
