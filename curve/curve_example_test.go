package curve_test

import (
	"bytes"
	"fmt"

	"gonum.org/v1/gonum/stat/distuv"

	"growband/curve"
)

// handReference returns a reference built by hand: one stratum on ages 0 to
// 10 whose centiles are those of N(50, 2) at every age (linear B-splines
// with equal coefficients are constant).
func handReference() *curve.Reference {
	var taus []float64
	var coef [][]float64
	for k := 1; k <= 99; k++ {
		tau := float64(k) / 100
		q := 50 + 2*distuv.UnitNormal.Quantile(tau)
		taus = append(taus, tau)
		coef = append(coef, []float64{q, q})
	}
	return &curve.Reference{
		Measure: "length", Unit: "cm", AgeUnit: "months",
		AgeScale: curve.AgeScale{Kind: "identity"}, Degree: 1,
		Strata: []curve.Stratum{{
			Name: "girls", N: 500, AgeMin: 0, AgeMax: 10,
			Knots: []float64{0, 0, 10, 10}, Taus: taus, Coef: coef,
			Chart: []float64{0.03, 0.5, 0.97},
		}},
	}
}

func ExampleReference_Score() {
	r := handReference()
	for _, v := range []float64{50, 53, 56} {
		s, err := r.Score("girls", 4, v)
		if err != nil {
			fmt.Println(err)
			return
		}
		fmt.Printf("%.0f cm: z %.2f, centile %.1f", v, s.Z, s.Centile)
		if s.Flags != 0 {
			fmt.Printf(" (%v)", s.Flags)
		}
		fmt.Println()
	}
	_, err := r.Score("girls", 12, 50)
	fmt.Println(err)
	// Output:
	// 50 cm: z 0.00, centile 50.0
	// 53 cm: z 1.50, centile 93.3
	// 56 cm: z 3.00, centile 99.9 (beyond-tail)
	// curve: age outside the reference's range: age 12 not in [0, 10] of stratum "girls"
}

func ExampleLMSValue() {
	// WHO Child Growth Standards (2006), weight-for-age, boys at birth
	// (from memory): L = 0.3487, M = 3.3464, S = 0.14602.
	l, m, s := 0.3487, 3.3464, 0.14602
	for _, z := range []float64{-2, 0, 2} {
		fmt.Printf("z %+.0f: %.1f kg\n", z, curve.LMSValue(l, m, s, z))
	}
	fmt.Printf("4.0 kg: z %.2f\n", curve.LMSZ(l, m, s, 4.0))
	// Output:
	// z -2: 2.5 kg
	// z +0: 3.3 kg
	// z +2: 4.4 kg
	// 4.0 kg: z 1.26
}

func ExampleReference_LMS() {
	r := handReference()
	p, err := r.LMS("girls", 5)
	if err != nil {
		fmt.Println(err)
		return
	}
	// A normal distribution is Box–Cox normal with L = 1 and S = sd/mean.
	fmt.Printf("L %.3f M %.3f S %.4f, misfit below 1e-9: %v\n", p.L, p.M, p.S, p.Misfit < 1e-9)
	// Output:
	// L 1.000 M 50.000 S 0.0400, misfit below 1e-9: true
}

func ExampleSave() {
	var file bytes.Buffer
	if err := curve.Save(&file, handReference()); err != nil {
		fmt.Println(err)
		return
	}
	r, err := curve.Load(&file, "girls.json")
	if err != nil {
		fmt.Println(err)
		return
	}
	s, _ := r.Score("girls", 4, 53)
	fmt.Printf("z %.2f\n", s.Z)
	// A damaged file is refused.
	_, err = curve.Load(bytes.NewReader([]byte(`{"format": "growband-reference", "version": 1, "strata": [`)), "cut.json")
	fmt.Println(err)
	// Output:
	// z 1.50
	// cut.json:1:59: curve: malformed reference file: truncated: unexpected end of JSON input (byte 58)
}
