package spline

import (
	"fmt"
	"math"
)

// Basis is a B-spline basis of a given degree on a clamped knot vector.
// It is immutable after New, so one Basis may be evaluated from many
// goroutines at once.
type Basis struct {
	t      []float64 // full knot vector, owned
	degree int
	n      int // number of basis functions, len(t) - degree - 1
}

// stackCoef is the largest degree+1 for which Value and Slope use a
// fixed-size array instead of allocating their scratch.
const stackCoef = 16

// New returns the B-spline basis of the given degree on the full knot vector
// t, which must be finite and non-decreasing, have its first and its last
// knot each repeated exactly degree+1 times (clamped), and no interior knot
// repeated more than degree+1 times (that would make a basis function
// vanish identically). Bad knots return an error wrapping ErrKnots; a
// negative degree returns ErrDegree. New copies t.
func New(t []float64, degree int) (*Basis, error) {
	if degree < 0 {
		return nil, fmt.Errorf("%w: got %d", ErrDegree, degree)
	}
	if err := checkKnots(t, degree); err != nil {
		return nil, err
	}
	return &Basis{
		t:      append([]float64(nil), t...),
		degree: degree,
		n:      len(t) - degree - 1,
	}, nil
}

// checkKnots validates a full clamped knot vector for New.
func checkKnots(t []float64, k int) error {
	if len(t) < 2*(k+1) {
		return fmt.Errorf("%w: degree %d needs at least %d knots, got %d", ErrKnots, k, 2*(k+1), len(t))
	}
	for i, v := range t {
		if math.IsNaN(v) || math.IsInf(v, 0) {
			return fmt.Errorf("%w: knot %d is %g", ErrKnots, i, v)
		}
		if i > 0 && v < t[i-1] {
			return fmt.Errorf("%w: knots decrease at index %d (%g after %g)", ErrKnots, i, v, t[i-1])
		}
	}
	m := len(t)
	lo, hi := t[0], t[m-1]
	if !(lo < hi) {
		return fmt.Errorf("%w: no span of positive length (all knots equal %g)", ErrKnots, lo)
	}
	if t[k] != lo || t[k+1] == lo {
		return fmt.Errorf("%w: first knot %g must be repeated exactly %d times", ErrKnots, lo, k+1)
	}
	if t[m-1-k] != hi || t[m-2-k] == hi {
		return fmt.Errorf("%w: last knot %g must be repeated exactly %d times", ErrKnots, hi, k+1)
	}
	run := 1
	for i := 1; i < m; i++ {
		if t[i] == t[i-1] {
			run++
		} else {
			run = 1
		}
		if run > k+1 {
			return fmt.Errorf("%w: knot %g repeated more than %d times", ErrKnots, t[i], k+1)
		}
	}
	return nil
}

// Len returns the number of basis functions, len(t) - degree - 1.
func (b *Basis) Len() int { return b.n }

// Degree returns the polynomial degree of the basis.
func (b *Basis) Degree() int { return b.degree }

// Knots returns a copy of the full knot vector.
func (b *Basis) Knots() []float64 { return append([]float64(nil), b.t...) }

// Range returns the first and last knots, the interval on which the basis is
// defined.
func (b *Basis) Range() (lo, hi float64) { return b.t[0], b.t[len(b.t)-1] }

// span returns the index i with t[i] <= x < t[i+1] and degree <= i < n, or an
// error wrapping ErrOutOfRange. x == hi belongs to the last non-empty span,
// which is i = n-1 because the right end is clamped with multiplicity exactly
// degree+1.
func (b *Basis) span(x float64) (int, error) {
	lo, hi := b.Range()
	if !(x >= lo && x <= hi) { // also catches NaN
		return 0, fmt.Errorf("%w: x = %g not in [%g, %g]", ErrOutOfRange, x, lo, hi)
	}
	// Largest i in [degree, n-1] with t[i] <= x, by bisection.
	l, r := b.degree, b.n-1
	for l < r {
		mid := int(uint(l+r+1) >> 1)
		if b.t[mid] <= x {
			l = mid
		} else {
			r = mid - 1
		}
	}
	return l, nil
}

// Eval writes the degree+1 basis values B_{first}(x), ..., B_{first+degree}(x),
// the only ones that can be non-zero at x, into dst and returns first. It
// panics if len(dst) != degree+1. A point outside [lo, hi] (or NaN) returns an
// error wrapping ErrOutOfRange; there is no extrapolation.
//
// The values come from the Cox–de Boor recursion in the triangular form of
// de Boor (1972), in which every step is a convex combination of
// non-negative numbers, so the result is non-negative and sums to one up to
// rounding. Eval does not allocate.
//
// References:
//   - Cox M G (1972). IMA Journal of Applied Mathematics 10, 134–149.
//   - de Boor C (1972). Journal of Approximation Theory 6, 50–62.
func (b *Basis) Eval(dst []float64, x float64) (first int, err error) {
	if len(dst) != b.degree+1 {
		panic(fmt.Sprintf("spline: Eval dst has length %d, want degree+1 = %d", len(dst), b.degree+1))
	}
	i, err := b.span(x)
	if err != nil {
		return 0, err
	}
	b.lower(dst, x, i, b.degree)
	return i - b.degree, nil
}

// lower writes the q+1 values B_{i-q,q}(x), ..., B_{i,q}(x) into dst[:q+1]
// for x in the span [t[i], t[i+1]). The distances x - t[i+1-j+r] and
// t[i+r+1] - x are read from the knots directly, so no scratch is needed;
// every denominator spans [t[i], t[i+1]] and is therefore positive.
func (b *Basis) lower(dst []float64, x float64, i, q int) {
	t := b.t
	dst[0] = 1
	for j := 1; j <= q; j++ {
		saved := 0.0
		for r := 0; r < j; r++ {
			right := t[i+r+1] - x
			left := x - t[i+1-j+r]
			tmp := dst[r] / (right + left)
			dst[r] = saved + right*tmp
			saved = left * tmp
		}
		dst[j] = saved
	}
}

// Deriv is Eval for the order-th derivative with respect to x: it writes
// D^order B_{first}(x), ..., D^order B_{first+degree}(x) into dst and returns
// first. Order 0 is Eval; orders above the degree give zeros. It panics if
// len(dst) != degree+1 or order < 0, and returns an error wrapping
// ErrOutOfRange for x outside [lo, hi]. At a knot the derivative is the one
// of the span to the right (of the last span at hi). Deriv does not allocate.
//
// It evaluates the degree-(degree-order) basis and raises the degree order
// times with the derivative formula
//
//	D^d B_{j,q} = q * (D^(d-1) B_{j,q-1}/(t_{j+q}-t_j) - D^(d-1) B_{j+1,q-1}/(t_{j+q+1}-t_{j+1}))
//
// of de Boor (1978), in place in dst.
//
// References:
//   - de Boor C (1978). A Practical Guide to Splines. Springer, New York.
func (b *Basis) Deriv(dst []float64, x float64, order int) (first int, err error) {
	k := b.degree
	if len(dst) != k+1 {
		panic(fmt.Sprintf("spline: Deriv dst has length %d, want degree+1 = %d", len(dst), k+1))
	}
	if order < 0 {
		panic(fmt.Sprintf("spline: negative derivative order %d", order))
	}
	i, err := b.span(x)
	if err != nil {
		return 0, err
	}
	if order > k {
		clear(dst)
		return i - k, nil
	}
	p := k - order
	b.lower(dst, x, i, p)
	t := b.t
	for q := p + 1; q <= k; q++ {
		// dst[:q] holds values for j = i-q+1, ..., i at degree q-1; produce
		// dst[:q+1] for j = i-q, ..., i at degree q. Going downwards, dst[s]
		// is read before it is overwritten and dst[s+1] is no longer needed.
		fq := float64(q)
		next := 0.0 // the degree-(q-1) value for j+1; zero beyond the end
		for s := q; s >= 0; s-- {
			j := i - q + s
			cur := 0.0 // degree-(q-1) value for j; zero before the start
			if s > 0 {
				cur = dst[s-1]
			}
			v := 0.0
			if s > 0 {
				v += cur / (t[j+q] - t[j])
			}
			if s < q {
				v -= next / (t[j+q+1] - t[j+1])
			}
			dst[s] = fq * v
			next = cur
		}
	}
	return i - k, nil
}

// Value returns the spline sum_j coef[j]*B_j(x). It panics if
// len(coef) != Len() and returns an error wrapping ErrOutOfRange for x
// outside [lo, hi].
func (b *Basis) Value(coef []float64, x float64) (float64, error) {
	return b.combine(coef, x, 0)
}

// Slope returns the first derivative with respect to x of the spline
// sum_j coef[j]*B_j(x). It panics if len(coef) != Len() and returns an error
// wrapping ErrOutOfRange for x outside [lo, hi].
func (b *Basis) Slope(coef []float64, x float64) (float64, error) {
	return b.combine(coef, x, 1)
}

func (b *Basis) combine(coef []float64, x float64, order int) (float64, error) {
	if len(coef) != b.n {
		panic(fmt.Sprintf("spline: %d coefficients for %d basis functions", len(coef), b.n))
	}
	var buf [stackCoef]float64
	var w []float64
	if b.degree+1 <= stackCoef {
		w = buf[:b.degree+1]
	} else {
		w = make([]float64, b.degree+1)
	}
	first, err := b.Deriv(w, x, order)
	if err != nil {
		return 0, err
	}
	s := 0.0
	for r, v := range w {
		s += coef[first+r] * v
	}
	return s, nil
}
