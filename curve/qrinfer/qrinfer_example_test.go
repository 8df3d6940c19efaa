package qrinfer_test

import (
	"fmt"

	"growband/curve/qrinfer"
)

// A median regression of y on x with the Hall–Sheather sandwich. The data
// are invented: y = 2 + 0.5 x plus a small alternating error.
func ExampleFit() {
	var p qrinfer.Problem
	p.Names = []string{"intercept", "x"}
	for i := range 40 {
		x := float64(i)
		e := []float64{-0.3, 0.1, 0.4, -0.2}[i%4]
		p.X = append(p.X, []float64{1, x})
		p.Y = append(p.Y, 2+0.5*x+e)
	}
	r, err := qrinfer.Fit(&p, 0.5, nil)
	if err != nil {
		fmt.Println(err)
		return
	}
	fmt.Println(r.Method)
	for _, c := range r.Coef {
		fmt.Printf("%-9s %.3f  [%.3f, %.3f]\n", c.Name, c.Estimate, c.Lo, c.Hi)
	}
	// Output:
	// sandwich, Hall-Sheather bandwidth
	// intercept 1.774  [1.506, 2.041]
	// x         0.509  [0.495, 0.522]
}
