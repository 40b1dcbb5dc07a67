package limits

import (
	"math"
	"testing"
)

// tol is the comparison tolerance for table values: they are exact decimal
// constants, so only float representation error could differ.
const tol = 1e-12

// Marks: [confirmed] read in a published copy, [from memory] recalled.
const (
	srcT1LV      = "IEEE 519-2014 Table 1, V ≤ 1.0 kV row [confirmed: published text on the 2014 changes]"
	srcT1Other   = "IEEE 519-2014 Table 1 [from memory, unconfirmed]"
	srcT2        = "IEEE 519-2014 Table 2 [confirmed: 1992 table in a textbook reprint; kept in 2014 from memory]"
	srcT2Even    = "IEEE 519-2014 Table 2 note: even harmonics 25 % of the odd limit [confirmed for 1992; 2014 from memory]"
	srcT2Bands   = "IEEE 519-2014 Table 2 band edges 3≤h<11 … 35≤h≤50 [from memory; upper bound 50 confirmed]"
	srcBoundDoc  = "our reading of the row labels '<20', '20<50', …, '>1000' (see CurrentLimits doc)"
	srcNorthWeir = "DESIGN.md scenario: ISC 6.1 kA, IL 160 A → ISC/IL 38.1; IEEE 519-2014 Table 2 row 20<50"
)

func TestVoltageLimits(t *testing.T) {
	tests := []struct {
		name     string
		busV     float64
		ind, thd float64
		src      string
	}{
		{"400 V cabinet bus", 400, 5, 8, srcT1LV},
		{"exactly 1 kV", 1000, 5, 8, srcT1LV + "; edge: 'V ≤ 1.0 kV' form from memory"},
		{"11 kV", 11e3, 3, 5, srcT1Other},
		{"just above 1 kV", 1000.001, 3, 5, srcT1Other + "; '1 kV < V ≤ 69 kV'"},
		{"exactly 69 kV", 69e3, 3, 5, srcT1Other},
		{"115 kV", 115e3, 1.5, 2.5, srcT1Other},
		{"exactly 161 kV", 161e3, 1.5, 2.5, srcT1Other},
		{"230 kV", 230e3, 1, 1.5, srcT1Other},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			ind, thd := VoltageLimits(tc.busV)
			if math.Abs(ind-tc.ind) > tol || math.Abs(thd-tc.thd) > tol {
				t.Errorf("VoltageLimits(%v) = %v, %v; want %v, %v (%s)", tc.busV, ind, thd, tc.ind, tc.thd, tc.src)
			}
		})
	}
}

func TestVoltageLimitsBadInput(t *testing.T) {
	for _, v := range []float64{0, -400, math.NaN()} { // src: common practice, no source (a bus voltage is positive)
		ind, thd := VoltageLimits(v)
		if !math.IsNaN(ind) || !math.IsNaN(thd) {
			t.Errorf("VoltageLimits(%v) = %v, %v; want NaN, NaN", v, ind, thd)
		}
	}
}

func TestCurrentRows(t *testing.T) {
	tests := []struct {
		name  string
		ratio float64
		want  CurrentRow
		src   string
	}{
		{"below 20", 10, CurrentRow{"<20", [5]float64{4.0, 2.0, 1.5, 0.6, 0.3}, 5.0}, srcT2},
		{"20 to 50", 38, CurrentRow{"20<50", [5]float64{7.0, 3.5, 2.5, 1.0, 0.5}, 8.0}, srcT2},
		{"50 to 100", 75, CurrentRow{"50<100", [5]float64{10.0, 4.5, 4.0, 1.5, 0.7}, 12.0}, srcT2},
		{"100 to 1000", 500, CurrentRow{"100<1000", [5]float64{12.0, 5.5, 5.0, 2.0, 1.0}, 15.0}, srcT2},
		{"above 1000", 2000, CurrentRow{">1000", [5]float64{15.0, 7.0, 6.0, 2.5, 1.4}, 20.0}, srcT2},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			got := CurrentLimits(tc.ratio)
			if got.RatioLabel != tc.want.RatioLabel || math.Abs(got.TDD-tc.want.TDD) > tol {
				t.Fatalf("CurrentLimits(%v) = %+v; want %+v (%s)", tc.ratio, got, tc.want, tc.src)
			}
			for b := range got.Bands {
				if math.Abs(got.Bands[b]-tc.want.Bands[b]) > tol {
					t.Errorf("band %d = %v; want %v (%s)", b, got.Bands[b], tc.want.Bands[b], tc.src)
				}
			}
		})
	}
}

func TestCurrentRowBoundaries(t *testing.T) {
	tests := []struct {
		ratio float64
		label string
		src   string
	}{
		{19.999, "<20", srcT2},
		{20, "20<50", srcBoundDoc + ": '<20' excludes 20"},
		{49.999, "20<50", srcT2},
		{50, "50<100", srcBoundDoc + ": middle rows include their lower edge"},
		{100, "100<1000", srcBoundDoc + ": middle rows include their lower edge"},
		{1000, "100<1000", srcBoundDoc + ": '>1000' excludes 1000"},
		{1000.001, ">1000", srcT2},
		{0, "<20", "our choice: unknown ratio → strictest row (conservative, no source)"},
		{math.NaN(), "<20", "our choice: unknown ratio → strictest row (conservative, no source)"},
		{math.Inf(1), ">1000", srcT2},
	}
	for _, tc := range tests {
		if got := CurrentLimits(tc.ratio).RatioLabel; got != tc.label {
			t.Errorf("CurrentLimits(%v) row %q; want %q (%s)", tc.ratio, got, tc.label, tc.src)
		}
	}
}

func TestIndividualCurrentLimit(t *testing.T) {
	row := CurrentLimits(38) // 20<50 row: 7.0, 3.5, 2.5, 1.0, 0.5
	tests := []struct {
		h    int
		want float64
		src  string
	}{
		{1, 0, "IEEE 519-2014 Table 2 limits harmonics only; fundamental not limited (our 0 = no limit)"},
		{2, 0, "below the first band (3 ≤ h); our 0 = no limit (Limits doc)"},
		{3, 7.0, srcT2Bands},
		{4, 7.0 * 0.25, srcT2Even},
		{5, 7.0, srcT2},
		{7, 7.0, srcT2},
		{9, 7.0, srcT2Bands},
		{10, 7.0 * 0.25, srcT2Even},
		{11, 3.5, srcT2Bands},
		{13, 3.5, srcT2},
		{16, 3.5 * 0.25, srcT2Even},
		{17, 2.5, srcT2Bands},
		{22, 2.5 * 0.25, srcT2Even},
		{23, 1.0, srcT2Bands},
		{34, 1.0 * 0.25, srcT2Even},
		{35, 0.5, srcT2Bands},
		{49, 0.5, srcT2},
		{50, 0.5 * 0.25, srcT2Even + "; 50 is the top of the last band"},
		{51, 0, "IEEE 519-2014 assesses up to h = 50 [confirmed]; above: no limit"},
		{-3, 0, "invalid order: no limit (no panic on bad input, STYLE.md)"},
	}
	for _, tc := range tests {
		if got := IndividualCurrentLimit(row, tc.h); math.Abs(got-tc.want) > tol {
			t.Errorf("IndividualCurrentLimit(20<50, %d) = %v; want %v (%s)", tc.h, got, tc.want, tc.src)
		}
	}
}

func TestNorthWeir(t *testing.T) {
	const isc, il = 6100.0, 160.0 // DESIGN.md scenario
	ratio := isc / il
	if math.Abs(ratio-38.125) > tol { // closed form: 6100/160
		t.Fatalf("ratio %v", ratio)
	}
	row := CurrentLimits(ratio)
	if row.TDD != 8 { // srcNorthWeir
		t.Errorf("TDD limit %v; want 8 (%s)", row.TDD, srcNorthWeir)
	}
	if got := IndividualCurrentLimit(row, 5); got != 7 {
		t.Errorf("5th limit %v; want 7 (%s)", got, srcNorthWeir)
	}
	busV := 230 * math.Sqrt(3) // 398 V line-to-line
	if _, thd := VoltageLimits(busV); thd != 8 {
		t.Errorf("voltage THD limit %v; want 8 (%s)", thd, srcT1LV)
	}
}

func TestCurrentRowsIsCopy(t *testing.T) {
	rows := CurrentRows()
	rows[0].TDD = 99
	if CurrentLimits(1).TDD != 5 { // srcT2: the table is read-only
		t.Fatal("CurrentRows exposed the table")
	}
	if len(rows) != 5 {
		t.Fatalf("%d rows; want 5 (%s)", len(rows), srcT2)
	}
}
