// Package curve builds age-indexed growth references from measurements and
// scores new measurements against them.
//
// Each centile curve is a quantile regression on a cubic B-spline basis in a
// transformed age t = T(age):
//
//	Q_tau(age) = B(T(age))' b_tau
//
// fitted by curve/solver. Because B-spline functions are non-negative and sum
// to one, coefficients ordered across tau (b_tau_k <= b_tau_k+1 componentwise)
// make the curves ordered at every age: non-crossing is imposed as solver
// constraints, not checked afterwards. A measurement is scored by locating it
// among the fitted quantiles of the dense tau grid at its age and mapping the
// interpolated level to a z-score, z = Phi^-1(centile).
//
// Scale. Fit holds each row as its age, value and weight (24 bytes; T(age)
// another 8 unless the age scale is the identity), the B-spline design row
// (40 bytes for cubics), and, for each tau grid being solved, the solver's
// copy of the responses with the two costs of each row and its scale and
// sign for the reduction (about 34 bytes; two grids run at once with two
// workers). Measured peak memory with the defaults, two strata of 5,000,000
// rows each: 1.74 GB resident for 10,000,000 rows, about 175 bytes per input
// row, of which the caller's Data holds 32 (ages, values, stratum labels);
// 470 MB for 2,000,000 rows (/usr/bin/time -v). Smoothness is chosen on a
// sample of SelectRows rows of each larger stratum, so beyond that size the
// time grows with the final grid: one pass over the rows per tau, plus an
// interior point on a band of about 2*sqrt(p*n) rows.
package curve
