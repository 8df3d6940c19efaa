package cohort_test

import (
	"fmt"
	"strings"

	"growband/curve"
	"growband/internal/cohort"
)

func ExampleCompare() {
	ref, err := curve.LoadLMSTable(strings.NewReader("# age_unit = months\nage,L,M,S\n0,0,3.3,0.12\n24,0,12,0.12\n"), "t.csv", nil)
	if err != nil {
		fmt.Println(err)
		return
	}
	// Four children at 12 months, at z = -2.5, -1, 0 and 1 (L = 0: y = M exp(S z)),
	// and one row beyond the table.
	m := 3.3 + (12-3.3)/2
	d := &curve.Data{Age: []float64{12, 12, 12, 12, 30}, Value: []float64{0, 0, 0, 0, 14}}
	for i, z := range []float64{-2.5, -1, 0, 1} {
		d.Value[i] = m * curve.LMSValue(0, 1, 0.12, z)
	}
	res, err := cohort.Compare(ref, d, nil)
	if err != nil {
		fmt.Println(err)
		return
	}
	g := res.Groups[len(res.Groups)-1]
	fmt.Printf("n %d, mean z %.3f, below -2: %.2f (expected %.5f)\n", g.N, g.Mean.Value, g.Below2.Value, g.Below2.Expected)
	fmt.Printf("not scored: row %d\n", res.Unscored[0].Row)
	// Output:
	// n 4, mean z -0.625, below -2: 0.25 (expected 0.02275)
	// not scored: row 4
}
