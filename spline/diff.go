package spline

import (
	"fmt"

	"gonum.org/v1/gonum/mat"
)

// DiffCoef returns the coefficients of the order-th forward difference,
// (Δ^d c)_i = sum_r w[r]*c[i+r] with w[r] = (-1)^(d-r)*binom(d, r), so
// order 1 gives -1, 1 and order 2 gives 1, -2, 1. The result has length
// order+1. It panics if order < 0.
func DiffCoef(order int) []float64 {
	if order < 0 {
		panic(fmt.Sprintf("spline: negative difference order %d", order))
	}
	// Build Pascal's row with alternating signs: w <- (shift w) - w.
	w := make([]float64, order+1)
	w[0] = 1
	for d := 1; d <= order; d++ {
		for r := d; r >= 1; r-- {
			w[r] = w[r-1] - w[r]
		}
		w[0] = -w[0]
	}
	return w
}

// Difference returns the (p-order)-by-p matrix D whose row i holds
// DiffCoef(order) in columns i, ..., i+order, so D c is the vector of
// order-th differences of the coefficients c; |D c| or ||D c||^2 is the
// roughness penalty of Eilers & Marx (1996). It panics if order < 0 or
// order >= p: callers choosing the order from user input must check it.
//
// References:
//   - Eilers P H C, Marx B D (1996). Flexible smoothing with B-splines and
//     penalties. Statistical Science 11, 89–121.
func Difference(p, order int) *mat.Dense {
	if order < 0 || order >= p {
		panic(fmt.Sprintf("spline: difference order %d needs 0 <= order < p = %d", order, p))
	}
	w := DiffCoef(order)
	rows := p - order
	d := mat.NewDense(rows, p, nil)
	for i := range rows {
		for r, v := range w {
			d.Set(i, i+r, v)
		}
	}
	return d
}
