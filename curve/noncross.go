package curve

import (
	"fmt"
	"math"
	"slices"

	"growband/curve/solver"
)

// Non-crossing centile curves.
//
// A curve is Q_tau(t) = sum_j B_j(t) b_tau,j with B-spline functions that are
// non-negative and sum to one at every t. Hence if b_tau <= b_tau'
// componentwise then
//
//	Q_tau'(t) - Q_tau(t) = sum_j B_j(t) (b_tau',j - b_tau,j) >= 0
//
// at every age: ordered coefficients are sufficient (not necessary) for
// curves that never cross, and the guarantee survives floating point,
// because products with B_j(t) >= 0 and sums of ordered terms round
// monotonically. Both modes below deliver Coef[k] <= Coef[k+1]
// componentwise exactly.
//
// NonCrossConstrain fits the median first, then steps outward through the
// sorted tau grid, each fit constrained by its inner neighbour: b_tau >=
// b_prev for tau above the median (G = I, h = b_prev) and -b_tau >= -b_prev
// below it; each solve is warm-started from the neighbour's solution. This
// is the stepwise scheme of Wu & Liu (2009), here with the componentwise
// B-spline sufficient condition as the constraint set. The constraints are
// always feasible (b_tau = b_prev satisfies them) and bind only where the
// unconstrained fits would be out of order.
//
// NonCrossRearrange fits every tau unconstrained and then sorts, for each
// coefficient index j, the values b_tau,j across tau. Chernozhukov,
// Fernández-Val & Galichon (2010) rearrange the fitted curve values across
// tau at each age; sorting the coefficients instead keeps the stored
// B-spline form. It is that same monotone rearrangement applied to each
// coefficient function tau -> b_tau,j (for a true coefficient function that
// is increasing it can only reduce the estimation error in every L^p norm
// over the grid, by their Proposition 1 from memory), and it coincides with
// rearranging the curve values at the two end ages, where one B-spline
// equals one; in between it is not the value rearrangement of that paper.
//
// References:
//   - Wu Y, Liu Y (2009). Stepwise multiple quantile regression estimation
//     using non-crossing constraints. Statistics and Its Interface 2,
//     299–310 (from memory).
//   - Chernozhukov V, Fernández-Val I, Galichon A (2010). Quantile and
//     probability curves without crossing. Econometrica 78, 1093–1125.

// orderTol is the relative amount by which a solver answer may violate an
// ordering constraint before it is an error; smaller violations are
// rounding in the vertex's linear solve and are clamped away.
const orderTol = 1e-9

// fitGrid fits the sorted grid taus, which must contain 0.5, without
// crossing, and returns the coefficient vectors in the order of taus.
// median, if not nil, is the already solved unconstrained median fit of the
// same problem.
func fitGrid(pl *pool, m *model, y, w []float64, lambda float64, taus []float64, mode string, median *solver.Solution) ([][]float64, error) {
	return fitGridOn(pl, m.x, m.pen, y, w, lambda, taus, mode, median)
}

func fitGridOn(pl *pool, x, pen *solver.Design, y, w []float64, lambda float64, taus []float64, mode string, median *solver.Solution) ([][]float64, error) {
	mid := slices.Index(taus, 0.5)
	if mid < 0 {
		panic("curve: tau grid without the median")
	}
	problem := func(tau float64) *solver.Problem {
		p := &solver.Problem{Y: y, X: x, W: w, Tau: tau}
		if lambda > 0 && pen != nil {
			p.Lambda, p.Penalty = lambda, pen
		}
		return p
	}
	if median == nil {
		var err error
		median, err = pl.solve(problem(0.5), nil)
		if err != nil {
			return nil, fmt.Errorf("tau 0.5: %w", err)
		}
	}
	p := x.Cols
	coef := make([][]float64, len(taus))
	coef[mid] = slices.Clone(median.Coef)
	constrain := mode == NonCrossConstrain

	// chain walks from mid in direction dir (+1 up, -1 down).
	chain := func(dir int) error {
		var g [][]float64
		if constrain {
			g = make([][]float64, p)
			for j := range g {
				g[j] = make([]float64, p)
				g[j][j] = float64(dir)
			}
		}
		prev := median
		for k := mid + dir; k >= 0 && k < len(taus); k += dir {
			pr := problem(taus[k])
			inner := coef[k-dir]
			if constrain {
				h := make([]float64, p)
				for j := range h {
					h[j] = float64(dir) * inner[j]
				}
				pr.G, pr.H = g, h
			}
			s, err := pl.solve(pr, prev)
			if err != nil {
				return fmt.Errorf("tau %g: %w", taus[k], err)
			}
			b := slices.Clone(s.Coef)
			if constrain {
				for j := range b {
					gap := float64(dir) * (b[j] - inner[j]) // >= 0 when ordered
					if gap < 0 {
						if -gap > orderTol*(1+math.Abs(inner[j])) {
							return fmt.Errorf("tau %g: solver answer violates the ordering constraint on coefficient %d by %g", taus[k], j, -gap)
						}
						b[j] = inner[j]
					}
				}
			}
			coef[k] = b
			prev = s
		}
		return nil
	}
	if err := parallel(2, func(i int) error { return chain(1 - 2*i) }); err != nil {
		return nil, err
	}
	if !constrain {
		col := make([]float64, len(taus))
		for j := range p {
			for k := range coef {
				col[k] = coef[k][j]
			}
			slices.Sort(col)
			for k := range coef {
				coef[k][j] = col[k]
			}
		}
	}
	return coef, nil
}
