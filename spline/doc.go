// Package spline provides B-spline bases on clamped knot vectors, knot
// placement at quantiles or uniformly, and the difference matrices used as
// smoothness penalties on B-spline coefficients.
//
// For a degree k and a non-decreasing knot vector t_0 <= ... <= t_{n+k}
// whose first and last knots are repeated k+1 times, the n basis functions
// are defined by the Cox–de Boor recursion
//
//	B_{j,0}(x) = 1  if t_j <= x < t_{j+1}, else 0
//	B_{j,q}(x) = (x - t_j)/(t_{j+q} - t_j) * B_{j,q-1}(x)
//	           + (t_{j+q+1} - x)/(t_{j+q+1} - t_{j+1}) * B_{j+1,q-1}(x)
//
// (a term with a zero denominator is zero), and a spline is
// s(x) = sum_j c_j B_{j,k}(x) on [t_0, t_{n+k}]. On each span
// [t_i, t_{i+1}) only B_{i-k,k}, ..., B_{i,k} can be non-zero; they are
// non-negative and sum to one. Derivatives follow from
//
//	d/dx B_{j,q}(x) = q * ( B_{j,q-1}(x)/(t_{j+q} - t_j)
//	                      - B_{j+1,q-1}(x)/(t_{j+q+1} - t_{j+1}) ).
//
// The right end point x = t_{n+k} is assigned to the last non-empty span so
// the basis is continuous from the left there; points outside the range are
// errors, never extrapolated.
//
// The difference matrix D of order d has rows (Δ^d c)_i =
// sum_{r=0}^{d} (-1)^{d-r} binom(d, r) c_{i+r}; penalising D c makes
// neighbouring coefficients, and hence the spline, smooth (Eilers & Marx 1996).
//
// References:
//   - Cox M G (1972). The numerical evaluation of B-splines. IMA Journal of
//     Applied Mathematics 10, 134–149.
//   - de Boor C (1972). On calculating with B-splines. Journal of
//     Approximation Theory 6, 50–62.
//   - de Boor C (1978). A Practical Guide to Splines. Springer, New York.
//   - Eilers P H C, Marx B D (1996). Flexible smoothing with B-splines and
//     penalties. Statistical Science 11, 89–121.
//   - Hyndman R J, Fan Y (1996). Sample quantiles in statistical packages.
//     The American Statistician 50, 361–365.
package spline
