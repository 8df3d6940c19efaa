package spline

import (
	"math"
	"slices"
	"testing"

	"gonum.org/v1/gonum/mat"
)

func TestDiffCoef(t *testing.T) {
	// Rows of Pascal's triangle with alternating signs ending in +1 (exact).
	want := [][]float64{
		{1},
		{-1, 1},
		{1, -2, 1},
		{-1, 3, -3, 1},
		{1, -4, 6, -4, 1},
		{-1, 5, -10, 10, -5, 1},
	}
	for d, w := range want {
		if got := DiffCoef(d); !slices.Equal(got, w) {
			t.Errorf("DiffCoef(%d) = %v, want %v", d, got, w)
		}
	}
	// Exact identities: coefficients sum to 0 and |coefficients| to 2^d.
	for d := 1; d <= 12; d++ {
		sum, abs := 0.0, 0.0
		for _, v := range DiffCoef(d) {
			sum += v
			abs += math.Abs(v)
		}
		if sum != 0 || abs != math.Ldexp(1, d) {
			t.Errorf("DiffCoef(%d): sum %g, sum of |w| %g", d, sum, abs)
		}
	}
}

// TestDifference: D of order d annihilates polynomial sequences of degree
// < d and maps n^d to the constant d! (exact identities of finite
// differences; integer arithmetic, so exact in float64).
func TestDifference(t *testing.T) {
	const p = 12 // number of coefficients, arbitrary
	for d := 0; d <= 5; d++ {
		D := Difference(p, d)
		if r, c := D.Dims(); r != p-d || c != p {
			t.Fatalf("Difference(%d, %d) is %d×%d", p, d, r, c)
		}
		for m := 0; m <= d; m++ {
			seq := mat.NewVecDense(p, nil)
			for i := range p {
				seq.SetVec(i, math.Pow(float64(i)-4, float64(m))) // shifted so signs vary
			}
			var got mat.VecDense
			got.MulVec(D, seq)
			want := 0.0
			if m == d {
				want = factorial(d)
			}
			for i := range p - d {
				if got.AtVec(i) != want {
					t.Errorf("order %d on n^%d: row %d = %g, want %g", d, m, i, got.AtVec(i), want)
				}
			}
		}
	}
	// Composition: Δ^2 = Δ∘Δ, so D2(p) = D1(p-1)·D1(p) exactly.
	var prod mat.Dense
	prod.Mul(Difference(p-1, 1), Difference(p, 1))
	if !mat.Equal(&prod, Difference(p, 2)) {
		t.Errorf("D1·D1 != D2:\n%v", mat.Formatted(&prod))
	}
}

func factorial(n int) float64 {
	f := 1.0
	for k := 2; k <= n; k++ {
		f *= float64(k)
	}
	return f
}
