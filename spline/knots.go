package spline

import (
	"fmt"
	"math"
	"slices"
)

// Clamped returns the full clamped knot vector of the given degree: lo
// repeated degree+1 times, the interior knots, and hi repeated degree+1
// times. lo < hi must be finite and the interior knots finite, strictly
// increasing and strictly inside (lo, hi); otherwise the error wraps
// ErrKnots. A negative degree returns ErrDegree. The result is accepted by
// New.
func Clamped(lo, hi float64, interior []float64, degree int) ([]float64, error) {
	if degree < 0 {
		return nil, fmt.Errorf("%w: got %d", ErrDegree, degree)
	}
	if !finite(lo) || !finite(hi) || !(lo < hi) {
		return nil, fmt.Errorf("%w: boundary knots need finite lo < hi, got %g and %g", ErrKnots, lo, hi)
	}
	prev := lo
	for i, v := range interior {
		if !finite(v) {
			return nil, fmt.Errorf("%w: interior knot %d is %g", ErrKnots, i, v)
		}
		if !(v > prev) {
			return nil, fmt.Errorf("%w: interior knot %d (%g) not above %g", ErrKnots, i, v, prev)
		}
		prev = v
	}
	if len(interior) > 0 && !(prev < hi) {
		return nil, fmt.Errorf("%w: last interior knot %g not below hi = %g", ErrKnots, prev, hi)
	}
	t := make([]float64, 0, len(interior)+2*(degree+1))
	for range degree + 1 {
		t = append(t, lo)
	}
	t = append(t, interior...)
	for range degree + 1 {
		t = append(t, hi)
	}
	return t, nil
}

// QuantileKnots returns up to count strictly increasing interior knots at
// the sample quantiles of x of levels k/(count+1), k = 1, ..., count. The
// quantile is definition 7 of Hyndman & Fan (1996), linear interpolation
// between order statistics at position (len(x)-1)*p. Knots that are not
// strictly inside (min x, max x), and repeats caused by ties, are dropped,
// so the result may be shorter than count. The error wraps ErrData when x
// holds NaN or Inf or fewer than two distinct values, or count < 0. x is
// not modified.
//
// References:
//   - Hyndman R J, Fan Y (1996). Sample quantiles in statistical packages.
//     The American Statistician 50, 361–365.
func QuantileKnots(x []float64, count int) ([]float64, error) {
	if count < 0 {
		return nil, fmt.Errorf("%w: negative knot count %d", ErrData, count)
	}
	for i, v := range x {
		if !finite(v) {
			return nil, fmt.Errorf("%w: x[%d] is %g", ErrData, i, v)
		}
	}
	s := slices.Clone(x)
	slices.Sort(s)
	if len(s) < 2 || s[0] == s[len(s)-1] {
		return nil, fmt.Errorf("%w: need at least 2 distinct values, got %d values", ErrData, len(x))
	}
	lo, hi := s[0], s[len(s)-1]
	knots := make([]float64, 0, count)
	prev := lo
	for k := 1; k <= count; k++ {
		// Position (n-1)*k/(count+1) = f + g, split in integers so g is
		// as exact as a float64 can be.
		num, den := k*(len(s)-1), count+1
		f, g := num/den, float64(num%den)/float64(den)
		q := s[f]
		if g > 0 {
			// Clamp so rounding never leaves [s[f], s[f+1]]: keeps the
			// sequence monotone, which the duplicate test relies on.
			q = min(max(s[f]+g*(s[f+1]-s[f]), s[f]), s[f+1])
		}
		if q > prev && q < hi {
			knots = append(knots, q)
			prev = q
		}
	}
	return knots, nil
}

// UniformKnots returns count equally spaced interior knots
// lo + k*(hi-lo)/(count+1), k = 1, ..., count, or nil when count <= 0. It
// does not validate lo < hi; Clamped does.
func UniformKnots(lo, hi float64, count int) []float64 {
	if count <= 0 {
		return nil
	}
	knots := make([]float64, count)
	for k := range knots {
		p := float64(k+1) / float64(count+1)
		knots[k] = lo + p*(hi-lo)
	}
	return knots
}

func finite(v float64) bool { return !math.IsNaN(v) && !math.IsInf(v, 0) }
