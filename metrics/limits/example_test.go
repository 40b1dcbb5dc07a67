package limits_test

import (
	"fmt"

	"github.com/gridloupe/gridloupe/metrics/limits"
)

// North Weir pumping station, cabinet DC-2: ISC 6.1 kA, IL 160 A, 400 V bus.
func Example() {
	row := limits.CurrentLimits(6100.0 / 160.0)
	_, thd := limits.VoltageLimits(400)
	fmt.Printf("%s row %s: TDD %.1f %%, 5th %.1f %%, 6th %.2f %%, 11th %.1f %%\n",
		limits.Edition, row.RatioLabel, row.TDD,
		limits.IndividualCurrentLimit(row, 5), limits.IndividualCurrentLimit(row, 6),
		limits.IndividualCurrentLimit(row, 11))
	fmt.Printf("voltage THD %.1f %%\n", thd)
	// Output:
	// IEEE 519-2014 row 20<50: TDD 8.0 %, 5th 7.0 %, 6th 1.75 %, 11th 3.5 %
	// voltage THD 8.0 %
}

// Every Table 2 row with its TDD limit.
func ExampleCurrentRows() {
	for _, r := range limits.CurrentRows() {
		fmt.Printf("%-9s TDD %4.1f %%\n", r.RatioLabel, r.TDD)
	}
	// Output:
	// <20       TDD  5.0 %
	// 20<50     TDD  8.0 %
	// 50<100    TDD 12.0 %
	// 100<1000  TDD 15.0 %
	// >1000     TDD 20.0 %
}
