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
// below it; each solve is warm-started from the neighbour's solution
// (solver.SolveGrid with solver.Settings.Ordered). This
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
// same problem; it starts the grid.
//
// Both modes solve the grid by solver.SolveGrid, which walks outward from
// the median, each tau warm-started from its neighbour and verified on the
// full data; NonCrossConstrain adds the ordering constraints
// (solver.Settings.Ordered). The two halves of the grid, below and above
// the median, are solved at the same time, each from the median.
func fitGrid(pl *pool, m *model, y, w []float64, lambda float64, taus []float64, mode string, median *solver.Solution) ([][]float64, error) {
	return fitGridWith(pl, m.x, m.pen, y, w, lambda, taus, mode, median, nil)
}

func fitGridOn(pl *pool, x, pen *solver.Design, y, w []float64, lambda float64, taus []float64, mode string, median *solver.Solution) ([][]float64, error) {
	return fitGridWith(pl, x, pen, y, w, lambda, taus, mode, median, nil)
}

// fitGridWith is fitGridOn that calls solved, if not nil, after each tau is
// solved (the median twice, once by each half).
func fitGridWith(pl *pool, x, pen *solver.Design, y, w []float64, lambda float64, taus []float64, mode string, median *solver.Solution, solved func(float64)) ([][]float64, error) {
	mid := slices.Index(taus, 0.5)
	if mid < 0 {
		panic("curve: tau grid without the median")
	}
	pr := &solver.Problem{Y: y, X: x, W: w}
	if lambda > 0 && pen != nil {
		pr.Lambda, pr.Penalty = lambda, pen
	}
	constrain := mode == NonCrossConstrain
	if median == nil && x.Rows() > solver.PreprocessRows {
		// Solved once here rather than cold by both halves at once: a
		// cold start on millions of rows holds large reduced problems,
		// and each half then starts from the median at once.
		sols, err := pl.grid(pr, []float64{0.5}, nil)
		if err != nil {
			return nil, err
		}
		median = sols[0]
	}
	coef := make([][]float64, len(taus))
	halves := [2][]float64{taus[:mid+1], taus[mid:]}
	err := parallel(2, func(h int) error {
		half := halves[h]
		sols, err := pl.grid(pr, half, &solver.Settings{Start: median, Ordered: constrain, Solved: solved})
		if err != nil {
			return err
		}
		off := 0
		if h == 1 {
			off = mid
		}
		for k, s := range sols {
			if h == 1 && k == 0 {
				continue // the median, solved by both halves alike
			}
			coef[off+k] = slices.Clone(s.Coef)
		}
		return nil
	})
	if err != nil {
		return nil, err
	}
	p := x.Cols
	if constrain {
		// Outward from the median, clamp rounding-sized violations of the
		// order so that it holds exactly.
		for _, dir := range []int{1, -1} {
			for k := mid + dir; k >= 0 && k < len(taus); k += dir {
				inner := coef[k-dir]
				b := coef[k]
				for j := range b {
					gap := float64(dir) * (b[j] - inner[j]) // >= 0 when ordered
					if gap < 0 {
						if -gap > orderTol*(1+math.Abs(inner[j])) {
							return nil, fmt.Errorf("tau %g: solver answer violates the ordering constraint on coefficient %d by %g", taus[k], j, -gap)
						}
						b[j] = inner[j]
					}
				}
			}
		}
		return coef, nil
	}
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
	return coef, nil
}
