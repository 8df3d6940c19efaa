package curve_test

import (
	"fmt"
	"math/rand/v2"

	"growband/curve"
)

func ExampleFit() {
	// 1000 children aged 0 to 10 whose value rises by 3 per year with a
	// spread that grows with age (seeded, invented data).
	rng := rand.New(rand.NewPCG(1, 2))
	d := &curve.Data{}
	for range 1000 {
		age := 10 * rng.Float64()
		d.Age = append(d.Age, age)
		d.Value = append(d.Value, 50+3*age+(1+0.1*age)*rng.NormFloat64())
	}
	ref, err := curve.Fit(d, &curve.Settings{Measure: "length", Unit: "cm", AgeUnit: "years"})
	if err != nil {
		fmt.Println(err)
		return
	}
	st := ref.Strata[0]
	fmt.Println("chart taus:", st.Chart)
	fmt.Println("grid taus:", len(st.Taus), "from", st.Taus[0], "to", st.Taus[len(st.Taus)-1])
	fmt.Println("interior knots:", st.Smoothness.InteriorKnots, "chosen by", st.Smoothness.Criterion)
	for _, tau := range []float64{0.03, 0.5, 0.97} {
		q, err := ref.Quantile("", 5, tau)
		if err != nil {
			fmt.Println(err)
			return
		}
		fmt.Printf("Q(%.2f) at age 5: %.1f cm\n", tau, q)
	}
	// The truth at age 5 is N(65, 1.5^2): 3rd, 50th and 97th centiles
	// 62.2, 65.0 and 67.8 cm.

	// Output:
	// chart taus: [0.03 0.1 0.25 0.5 0.75 0.9 0.97]
	// grid taus: 99 from 0.01 to 0.99
	// interior knots: 0 chosen by sic
	// Q(0.03) at age 5: 62.4 cm
	// Q(0.50) at age 5: 65.1 cm
	// Q(0.97) at age 5: 67.8 cm
}
