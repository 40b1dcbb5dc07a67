package limits

import "math"

// Edition names the standard edition the tables reproduce. Newer editions
// differ (IEEE 519-2022 relaxed the even-harmonic rule), so reports name it.
const Edition = "IEEE 519-2014"

// voltageRow is one row of IEEE 519-2014 Table 1.
type voltageRow struct {
	maxV          float64 // upper edge of the bus voltage band, V (inclusive)
	individualPct float64 // individual harmonic, % of rated fundamental voltage
	thdPct        float64 // THD, %
}

// table1 is IEEE 519-2014 Table 1, "Voltage distortion limits". The ≤ 1 kV
// row is confirmed from a published text on the 2014 changes; the other
// rows are from memory (see REFERENCE.md §1.3).
var table1 = [...]voltageRow{
	{maxV: 1e3, individualPct: 5.0, thdPct: 8.0},
	{maxV: 69e3, individualPct: 3.0, thdPct: 5.0},
	{maxV: 161e3, individualPct: 1.5, thdPct: 2.5},
	{maxV: math.Inf(1), individualPct: 1.0, thdPct: 1.5},
}

// VoltageLimits returns the IEEE 519-2014 Table 1 limits, in percent of the
// rated fundamental voltage, for a PCC bus of busV volts (line-to-line):
// V ≤ 1 kV: 5 / 8; 1 kV < V ≤ 69 kV: 3 / 5; 69 kV < V ≤ 161 kV: 1.5 / 2.5;
// V > 161 kV: 1 / 1.5. Band edges belong to the lower band ("V ≤ 1.0 kV",
// "1 kV < V ≤ 69 kV"). A busV that is not a positive number (NaN, zero,
// negative) has no row: both results are NaN.
//
// The >161 kV THD limit of 1.5 % carries a footnote (up to 2 % where an
// HVDC terminal is the cause) that this lookup does not apply.
func VoltageLimits(busV float64) (individualPct, thdPct float64) {
	if !(busV > 0) {
		return math.NaN(), math.NaN()
	}
	for _, r := range table1 {
		if busV <= r.maxV {
			return r.individualPct, r.thdPct
		}
	}
	return math.NaN(), math.NaN() // unreachable: the last row's edge is +Inf
}

// Number of odd-harmonic bands in Table 2.
const nBands = 5

// CurrentRow is one row of IEEE 519-2014 Table 2 (current distortion limits
// for systems rated 120 V through 69 kV), in percent of IL, the maximum
// demand load current.
type CurrentRow struct {
	RatioLabel string          // ISC/IL as the table writes it: "<20", "20<50", "50<100", "100<1000", ">1000"
	Bands      [nBands]float64 // odd harmonics: 3≤h<11, 11≤h<17, 17≤h<23, 23≤h<35, 35≤h≤50, % of IL
	TDD        float64         // total demand distortion, % of IL
}

// table2 is IEEE 519-2014 Table 2. The numbers are confirmed in the 1992
// table reprinted in a power-quality textbook; that 2014 kept them is from
// memory (REFERENCE.md §1.5).
var table2 = [...]CurrentRow{
	{RatioLabel: "<20", Bands: [nBands]float64{4.0, 2.0, 1.5, 0.6, 0.3}, TDD: 5.0},
	{RatioLabel: "20<50", Bands: [nBands]float64{7.0, 3.5, 2.5, 1.0, 0.5}, TDD: 8.0},
	{RatioLabel: "50<100", Bands: [nBands]float64{10.0, 4.5, 4.0, 1.5, 0.7}, TDD: 12.0},
	{RatioLabel: "100<1000", Bands: [nBands]float64{12.0, 5.5, 5.0, 2.0, 1.0}, TDD: 15.0},
	{RatioLabel: ">1000", Bands: [nBands]float64{15.0, 7.0, 6.0, 2.5, 1.4}, TDD: 20.0},
}

// CurrentRows returns a copy of every Table 2 row, strictest first.
func CurrentRows() []CurrentRow { return append([]CurrentRow(nil), table2[:]...) }

// CurrentLimits returns the IEEE 519-2014 Table 2 row for the ratio
// ISC/IL (short-circuit current at the PCC over the maximum demand load
// current).
//
// The table labels its rows "< 20", "20 < 50", "50 < 100", "100 < 1000" and
// "> 1000", which leaves the edges open. This lookup reads the two labels
// that are explicit literally and continues their pattern: "< 20" excludes
// 20, so a ratio of exactly 20 takes the "20<50" row; likewise exactly 50
// takes "50<100" and exactly 100 takes "100<1000" (each middle row includes
// its lower edge); "> 1000" excludes 1000, so exactly 1000 stays in
// "100<1000". So: r < 20; 20 ≤ r < 50; 50 ≤ r < 100; 100 ≤ r ≤ 1000;
// r > 1000.
//
// A ratio that is NaN, zero or negative (ISC or IL unknown) selects the
// strictest row, "<20"; so does, by the table's note, all power-generation
// equipment whatever its ratio (the caller passes 0 for it).
func CurrentLimits(iscOverIL float64) CurrentRow {
	r := iscOverIL
	switch {
	case !(r >= 20): // also NaN
		return table2[0]
	case r < 50:
		return table2[1]
	case r < 100:
		return table2[2]
	case r <= 1000:
		return table2[3]
	}
	return table2[4]
}

// bandEdges are the lower edges of the Table 2 bands; the last band ends at 50.
var bandEdges = [nBands]int{3, 11, 17, 23, 35}

// MaxOrder is the highest order IEEE 519-2014 assesses.
const MaxOrder = 50

// evenFraction limits an even harmonic to this fraction of the odd limit of
// its band: IEEE 519-2014 Table 2 note, from memory (confirmed for the 1992
// table; 519-2022 relaxed it).
const evenFraction = 0.25

// IndividualCurrentLimit returns the limit of harmonic order h, in percent
// of IL, from row: the band's value for odd h, 25 % of it for even h (the
// Table 2 note; from memory for the 2014 edition). Orders below 3 and above
// 50 are not limited by the table: the result is 0, which means "no limit",
// not "must be zero".
func IndividualCurrentLimit(row CurrentRow, h int) float64 {
	if h < bandEdges[0] || h > MaxOrder {
		return 0
	}
	b := nBands - 1
	for b > 0 && h < bandEdges[b] {
		b--
	}
	lim := row.Bands[b]
	if h%2 == 0 {
		lim *= evenFraction
	}
	return lim
}
