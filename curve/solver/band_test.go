package solver

import (
	"math"
	"math/rand/v2"
	"testing"

	"gonum.org/v1/gonum/mat"
)

// TestBandCholesky compares the band Cholesky solve with gonum v0.17.0's
// dense Cholesky (mat.Cholesky, an independent implementation) on seeded
// random symmetric positive definite matrices of every bandwidth, built as
// B'B + I from banded B so that the band is known.
func TestBandCholesky(t *testing.T) {
	rng := rand.New(rand.NewPCG(11, 3))
	const tol = 1e-10 // relative agreement; the matrices are well conditioned (B'B + I)
	for trial := 0; trial < 200; trial++ {
		p := 1 + rng.IntN(16)
		bw := rng.IntN(p)
		a := mat.NewSymDense(p, nil)
		for i := 0; i < p; i++ {
			a.SetSym(i, i, 1)
		}
		// B'B over rows with entries in columns [f, f+bw].
		for r := 0; r < 2*p; r++ {
			f := rng.IntN(p - bw)
			row := make([]float64, bw+1)
			for k := range row {
				row[k] = rng.NormFloat64()
			}
			for k1, v1 := range row {
				for k2 := k1; k2 < len(row); k2++ {
					a.SetSym(f+k1, f+k2, a.At(f+k1, f+k2)+v1*row[k2])
				}
			}
		}
		raw := a.RawSymmetric()
		if got := bandwidth(raw.Data, p, raw.Stride); got > bw {
			t.Fatalf("trial %d: bandwidth %d, built with %d", trial, got, bw)
		}
		rhs := make([]float64, p)
		for i := range rhs {
			rhs[i] = rng.NormFloat64()
		}
		var c bandCholesky
		if !c.factor(raw.Data, p, raw.Stride) {
			t.Fatalf("trial %d: positive definite matrix refused", trial)
		}
		got := make([]float64, p)
		c.solve(got, rhs)
		var ch mat.Cholesky
		if !ch.Factorize(a) {
			t.Fatalf("trial %d: gonum refused the matrix", trial)
		}
		var want mat.VecDense
		if err := ch.SolveVecTo(&want, mat.NewVecDense(p, rhs)); err != nil {
			t.Fatal(err)
		}
		for i := range got {
			if w := want.AtVec(i); math.Abs(got[i]-w) > tol*(1+math.Abs(w)) {
				t.Fatalf("trial %d (p %d, band %d): x[%d] = %.15g, gonum %.15g", trial, p, bw, i, got[i], w)
			}
		}
	}
}

// TestBandCholeskyRefuses checks that a matrix that is not positive
// definite is refused: [[1, 2], [2, 1]] has eigenvalues 3 and -1, and the
// zero matrix is singular (exact arithmetic).
func TestBandCholeskyRefuses(t *testing.T) {
	var c bandCholesky
	if c.factor([]float64{1, 2, 2, 1}, 2, 2) {
		t.Error("indefinite matrix accepted")
	}
	if c.factor([]float64{0, 0, 0, 0}, 2, 2) {
		t.Error("zero matrix accepted")
	}
}

// TestNormalMatrixBanded checks that the interior point's normal matrix on
// a cubic B-spline design has bandwidth degree = 3, so that the band
// Cholesky works in O(p·w²): rows of a cubic B-spline basis have four
// consecutive non-zero entries (exact identity).
func TestNormalMatrixBanded(t *testing.T) {
	s := newIPM(newTable(testGrowthProblem(2000)))
	if err := s.start(); err != nil {
		t.Fatal(err)
	}
	raw := s.m.RawSymmetric()
	if bw := bandwidth(raw.Data, s.p, raw.Stride); bw != benchDegree {
		t.Errorf("normal matrix bandwidth %d, want %d", bw, benchDegree)
	}
	if s.chol.bw != benchDegree {
		t.Errorf("factor bandwidth %d, want %d", s.chol.bw, benchDegree)
	}
}
