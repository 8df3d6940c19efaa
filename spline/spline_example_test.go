package spline_test

import (
	"fmt"

	"gonum.org/v1/gonum/mat"

	"growband/spline"
)

// The uniform cubic B-splines at a knot take the values 1/6, 2/3, 1/6.
func ExampleBasis_Eval() {
	knots, err := spline.Clamped(0, 10, spline.UniformKnots(0, 10, 9), 3)
	if err != nil {
		fmt.Println(err)
		return
	}
	b, err := spline.New(knots, 3)
	if err != nil {
		fmt.Println(err)
		return
	}
	dst := make([]float64, b.Degree()+1)
	first, err := b.Eval(dst, 5)
	if err != nil {
		fmt.Println(err)
		return
	}
	fmt.Printf("%d basis functions; B_%d..B_%d at 5: %.4f\n", b.Len(), first, first+3, dst)
	_, err = b.Eval(dst, 10.5)
	fmt.Println(err)
	// Output:
	// 13 basis functions; B_5..B_8 at 5: [0.1667 0.6667 0.1667 0.0000]
	// spline: x outside the knot range: x = 10.5 not in [0, 10]
}

// With the Greville abscissae as coefficients a spline reproduces the
// straight line s(x) = x, and its slope is 1.
func ExampleBasis_Value() {
	knots, _ := spline.Clamped(0, 4, []float64{1, 3}, 2)
	b, _ := spline.New(knots, 2)
	coef := make([]float64, b.Len())
	for j := range coef {
		coef[j] = (knots[j+1] + knots[j+2]) / 2
	}
	for _, x := range []float64{0, 0.5, 2.25, 4} {
		v, _ := b.Value(coef, x)
		s, _ := b.Slope(coef, x)
		fmt.Printf("x=%.2f value=%.2f slope=%.2f\n", x, v, s)
	}
	// Output:
	// x=0.00 value=0.00 slope=1.00
	// x=0.50 value=0.50 slope=1.00
	// x=2.25 value=2.25 slope=1.00
	// x=4.00 value=4.00 slope=1.00
}

func ExampleClamped() {
	knots, err := spline.Clamped(0, 1, []float64{0.25, 0.5}, 2)
	fmt.Println(knots, err)
	_, err = spline.Clamped(0, 1, []float64{0.5, 0.25}, 2)
	fmt.Println(err)
	// Output:
	// [0 0 0 0.25 0.5 1 1 1] <nil>
	// spline: invalid knot vector: interior knot 1 (0.25) not above 0.5
}

// Ties at the minimum push the first quantiles onto the boundary, so fewer
// knots than asked for come back.
func ExampleQuantileKnots() {
	x := []float64{1, 1, 1, 1, 1, 2, 3, 4, 5, 6}
	knots, err := spline.QuantileKnots(x, 4)
	fmt.Println(knots, err)
	// Output:
	// [2.4 4.2] <nil>
}

func ExampleDifference() {
	fmt.Println(spline.DiffCoef(2))
	fmt.Printf("%v\n", mat.Formatted(spline.Difference(5, 2)))
	// Output:
	// [1 -2 1]
	// ⎡ 1  -2   1   0   0⎤
	// ⎢ 0   1  -2   1   0⎥
	// ⎣ 0   0   1  -2   1⎦
}
