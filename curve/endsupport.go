package curve

import (
	"fmt"
	"math"

	"gonum.org/v1/gonum/mat"
)

// EndSupportRatio: a candidate age scale whose curves at an end of the age
// range rest on fewer than 1/EndSupportRatio of the effective rows that the
// best-supported candidate's rest on there (see endSupport) is passed over
// by ChooseAgeScale. 4 in rows is twice the standard error: a scale that
// stretches the first months (age^(1/3) on a survey with few newborns)
// leaves the curves at birth to a few dozen rows, and their sampling error
// there to many times that of the other scales, while the criterion,
// summed over all rows, barely notices (measured in tail_test.go: 27
// effective rows at birth under age^(1/2) against 215 under the identity,
// n = 15,000, and a 3rd centile 1.1 z off at birth).
const EndSupportRatio = 4

// endSupport returns the effective number of rows behind a stratum's
// fitted curves at the two ends of its range, for the knots of model m on
// rows r: 1/v with
//
//	v = b' A^-1 B A^-1 b,  A = sum_i w_i x_i x_i' / W,  B = sum_i w_i^2 x_i x_i' / W^2,
//
// x_i the basis row of row i, W the summed weights and b the basis at the
// end. Under iid errors the asymptotic variance of a fitted quantile
// regression curve at age a is tau (1 - tau) / f^2 times b(a)' (X'X)^-1 b(a)
// (Koenker 2005, section 4.2; weighted here in sandwich form), so 1/v is
// the number of rows whose plain quantile would be as precise: it ignores
// the penalty, which only adds precision, and the density, which is the
// same for every age scale. It returns an error when A is singular.
func endSupport(m *model, r *rows) (lo, hi float64, err error) {
	x := m.x
	n := len(x.First)
	if n == 0 || n != len(r.w) {
		return 0, 0, fmt.Errorf("%w: no design rows for the end support", ErrData)
	}
	p := x.Cols
	a := mat.NewSymDense(p, nil)
	bm := mat.NewSymDense(p, nil)
	total := 0.0
	for i := range n {
		total += r.w[i]
	}
	for i := range n {
		w := r.w[i] / total
		row := x.Val[i*x.Width : (i+1)*x.Width]
		f := x.First[i]
		for j, vj := range row {
			if vj == 0 {
				continue
			}
			for k := j; k < len(row); k++ {
				if row[k] == 0 {
					continue
				}
				prod := vj * row[k]
				a.SetSym(f+j, f+k, a.At(f+j, f+k)+w*prod)
				bm.SetSym(f+j, f+k, bm.At(f+j, f+k)+w*w*prod)
			}
		}
	}
	var ch mat.Cholesky
	if !ch.Factorize(a) {
		return 0, 0, fmt.Errorf("%w: the basis is singular on the rows", ErrDegenerate)
	}
	at := func(t float64) (float64, error) {
		vals := make([]float64, m.basis.Degree()+1)
		first, err := m.basis.Eval(vals, t)
		if err != nil {
			return 0, err
		}
		b := mat.NewVecDense(p, nil)
		for j, v := range vals {
			b.SetVec(first+j, v)
		}
		var u, bu mat.VecDense
		if err := ch.SolveVecTo(&u, b); err != nil {
			return 0, err
		}
		bu.MulVec(bm, &u)
		v := mat.Dot(&u, &bu)
		if !(v > 0) {
			return math.Inf(1), nil
		}
		return 1 / v, nil
	}
	tlo, thi := m.basis.Range()
	if lo, err = at(tlo); err != nil {
		return 0, 0, err
	}
	if hi, err = at(thi); err != nil {
		return 0, 0, err
	}
	return lo, hi, nil
}
