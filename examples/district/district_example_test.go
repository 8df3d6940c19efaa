package district_test

import (
	"fmt"

	"growband/examples/district"
)

func ExampleTrueQuantile() {
	for _, tau := range []float64{0.03, 0.5, 0.97} {
		w := district.TrueQuantile(district.Weight, "F", 12, tau)
		fmt.Printf("girls at 12 months, tau %.2f: %.2f kg\n", tau, w)
	}
	// Output:
	// girls at 12 months, tau 0.03: 7.57 kg
	// girls at 12 months, tau 0.50: 9.40 kg
	// girls at 12 months, tau 0.97: 11.68 kg
}

func ExampleRow_Clean() {
	rows := district.Generate()
	clean := 0
	for _, r := range rows {
		if r.Clean(district.Weight) {
			clean++
		}
	}
	fmt.Printf("%d rows, %d usable for weight\n", len(rows), clean)
	// Output:
	// 9582 rows, 9508 usable for weight
}
