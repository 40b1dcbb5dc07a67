package encode_test

import (
	"fmt"
	"os"
	"time"

	"github.com/gridloupe/gridloupe/metrics"
	"github.com/gridloupe/gridloupe/stream/encode"
)

// exampleSetup is one phase of the invented North Weir DC-2 cabinet: a
// voltage and a drive current, fundamental and 5th harmonic only, IL 160 A.
func exampleSetup() *metrics.Setup {
	return &metrics.Setup{
		Channels: []metrics.Channel{
			{Name: "va", Kind: metrics.Voltage, Phase: 'a'},
			{Name: "ia", Kind: metrics.Current, Phase: 'a'},
		},
		Orders:   []int{1, 5},
		Wiring:   metrics.SinglePhase,
		NominalV: 230,
		ILA:      160,
		Pairs:    []metrics.Pair{{Phase: 'a', V: 0, I: 1}},
		Neutral:  -1,
		VIdx:     [3]int{0, -1, -1},
		IIdx:     [3]int{1, -1, -1},
	}
}

func exampleRecord() *metrics.Record {
	return &metrics.Record{
		Interval:  metrics.Int200ms,
		Start:     time.Date(2026, 3, 1, 10, 0, 0, 0, time.UTC),
		DurationS: 0.2,
		Samples:   2048,
		FreqHz:    50,
		Channels: []metrics.ChannelValues{
			{RMS: 230.1, DC: 0, THDPct: 1.5, CrestFactor: 1.42, TDDPct: metrics.Null(), TDDH50Pct: metrics.Null(),
				H: []metrics.Harmonic{{H: 1, RMS: 230, Pct: 100, PctIL: metrics.Null(), PhaseDeg: 0},
					{H: 5, RMS: 3.1, Pct: 1.35, PctIL: metrics.Null(), PhaseDeg: -118.2}}},
			{RMS: 47.9, DC: 0, THDPct: 30.6, TDDPct: 8.77, CrestFactor: 1.9,
				H: []metrics.Harmonic{{H: 1, RMS: 45.8, Pct: 100, PctIL: 28.6, PhaseDeg: -12},
					{H: 5, RMS: 9.1, Pct: 19.9, PctIL: 5.69, PhaseDeg: metrics.Null()}}},
		},
		Phases: []metrics.PhaseValues{{Phase: 'a', P: 10330, P1: 10300, Q1: 2190, S: 11020, S1: 10534,
			SN: 3240, DI: 3230, DV: 220, SH: 68, PF: 0.937, DPF: 0.978}},
		Total: metrics.TotalValues{P: 10330, Q1: 2190, S: 11020, Se: 11020, Se1: 10534, Ve: 230.1, Ie: 47.9,
			PF: 0.937, DPF: 0.978},
		UnbV: metrics.Null(), UnbI: metrics.Null(),
	}
}

func ExampleNewJSONL() {
	w := encode.NewJSONL(os.Stdout, exampleSetup())
	if err := w.Write(exampleRecord()); err != nil {
		fmt.Println(err)
	}
	if err := w.Flush(); err != nil {
		fmt.Println(err)
	}
	// Output:
	// {"interval":"200ms","start":"2026-03-01T10:00:00.000000Z","duration_s":0.2,"samples":2048,"freq_hz":50,"flags":[],"channels":{"va":{"rms":230.1,"dc":0,"thd_pct":1.5,"crest_factor":1.42,"harmonics":[{"h":1,"rms":230,"pct":100,"phase_deg":0},{"h":5,"rms":3.1,"pct":1.35,"phase_deg":-118.2}]},"ia":{"rms":47.9,"dc":0,"thd_pct":30.6,"tdd_pct":8.77,"crest_factor":1.9,"harmonics":[{"h":1,"rms":45.8,"pct":100,"pct_il":28.6,"phase_deg":-12},{"h":5,"rms":9.1,"pct":19.9,"pct_il":5.69,"phase_deg":null}]}},"phases":{"a":{"p_w":10330,"p1_w":10300,"q_var":2190,"s_va":11020,"s1_va":10534,"sn_va":3240,"di_var":3230,"dv_var":220,"sh_va":68,"pf":0.937,"dpf":0.978}},"total":{"p_w":10330,"q_var":2190,"s_va":11020,"se_va":11020,"se1_va":10534,"ve_v":230.1,"ie_a":47.9,"pf":0.937,"dpf":0.978}}
}

func ExampleAppendJSON() {
	r := exampleRecord()
	r.Interval = metrics.Int3s
	r.Flags = metrics.FlagPartial
	b := encode.AppendJSON(make([]byte, 0, 1024), exampleSetup(), r)
	fmt.Println(string(b[:80]))
	// Output:
	// {"interval":"3s","start":"2026-03-01T10:00:00.000000Z","duration_s":0.2,"samples
}

func ExampleNewCSV() {
	w := encode.NewCSV(os.Stdout, exampleSetup())
	if err := w.Write(exampleRecord()); err != nil {
		fmt.Println(err)
	}
	if err := w.Flush(); err != nil {
		fmt.Println(err)
	}
	// Output:
	// interval,start,duration_s,samples,freq_hz,freq_10s_hz,flags,va.rms,va.dc,va.thd_pct,va.crest_factor,va.h1.rms,va.h1.pct,va.h1.phase_deg,va.h5.rms,va.h5.pct,va.h5.phase_deg,ia.rms,ia.dc,ia.thd_pct,ia.tdd_pct,ia.crest_factor,ia.h1.rms,ia.h1.pct,ia.h1.pct_il,ia.h1.phase_deg,ia.h5.rms,ia.h5.pct,ia.h5.pct_il,ia.h5.phase_deg,phase.a.p_w,phase.a.p1_w,phase.a.q_var,phase.a.s_va,phase.a.s1_va,phase.a.sn_va,phase.a.di_var,phase.a.dv_var,phase.a.sh_va,phase.a.pf,phase.a.dpf,total.p_w,total.q_var,total.s_va,total.se_va,total.se1_va,total.ve_v,total.ie_a,total.pf,total.dpf
	// 200ms,2026-03-01T10:00:00.000000Z,0.2,2048,50,,,230.1,0,1.5,1.42,230,100,0,3.1,1.35,-118.2,47.9,0,30.6,8.77,1.9,45.8,100,28.6,-12,9.1,19.9,5.69,,10330,10300,2190,11020,10534,3240,3230,220,68,0.937,0.978,10330,2190,11020,11020,10534,230.1,47.9,0.937,0.978
}

func ExampleNewTable() {
	w := encode.NewTable(os.Stdout, exampleSetup(), encode.TableOptions{Title: "North Weir pumping station, cabinet DC-2"})
	r := exampleRecord()
	r.Flags = metrics.FlagPartial
	if err := w.Write(r); err != nil {
		fmt.Println(err)
	}
	if err := w.Flush(); err != nil {
		fmt.Println(err)
	}
	// Output:
	// gridloupe: North Weir pumping station, cabinet DC-2
	// CAUTION: Measurements only: installation by qualified personnel under local electrical codes; rated sensors (CAT III or better); never open-circuit a loaded CT secondary; not a protective device.
	// THD% is thd_pct and TDD% tdd_pct (every component but DC and the fundamental); IEEE 519 compares the orders 2-50 values (--format table).
	//
	// start (UTC)               intvl    f Hz     va V  va THD%   va CF     ia A  ia THD%  ia TDD%   ia CF    PF a   DPF a      P kW    Q kvar      PF  flags
	// 2026-03-01T10:00:00.000Z  200ms  50.000    230.1     1.50    1.42    47.90    30.60     8.77    1.90   0.937   0.978     10.33      2.19   0.937  partial
}

func ExampleNewBlocks() {
	ref := &encode.Reference{Edition: "IEEE 519-2014", BusV: 230, VTHDPct: 8, IRow: "20<50", TDDPct: 8, IRowWhy: "ISC/IL 38.1"}
	w := encode.NewBlocks(os.Stdout, exampleSetup(), encode.TableOptions{Title: "North Weir pumping station, cabinet DC-2", Reference: ref})
	r := exampleRecord()
	r.Flags = metrics.FlagPartial
	if err := w.Write(r); err != nil {
		fmt.Println(err)
	}
	if err := w.Flush(); err != nil {
		fmt.Println(err)
	}
	// Output:
	// gridloupe: North Weir pumping station, cabinet DC-2
	// CAUTION: Measurements only: installation by qualified personnel under local
	//   electrical codes; rated sensors (CAT III or better); never open-circuit a
	//   loaded CT secondary; not a protective device.
	// THD-V is thd_pct, TDD tdd_pct (every component but DC and the fundamental):
	//   harmonics is a list, so the orders 2-50 values that IEEE 519 limits are not
	//   computed and nothing is compared.
	//
	// 200ms 2026-03-01T10:00:00.000Z  0.200 s  50.000 Hz  flags: partial
	// phase         V       A    THD-V %      TDD %     PF    DPF     P kW  Q1 kvar
	// a         230.1   47.90      1.50       8.77   0.937  0.978    10.33     2.19
}

func ExampleFormatTime() {
	fmt.Println(encode.FormatTime(time.Date(2026, 3, 1, 11, 0, 0, 250e6, time.FixedZone("CET", 3600))))
	// Output: 2026-03-01T10:00:00.250000Z
}

func ExampleParseFormat() {
	f, ok := encode.ParseFormat("csv")
	fmt.Println(f, ok)
	_, ok = encode.ParseFormat("xml")
	fmt.Println(ok)
	// Output:
	// csv true
	// false
}
