package curve

import (
	"math"
	"slices"

	"growband/curve/solver"
)

// A bootstrap replicate's quantile fit lies close to the point estimate's:
// its coefficients differ by sampling noise of order 1/sqrt(n). Rows far
// from the point estimate's curve keep their side of it in the replicate,
// so, as in the preprocessing of Portnoy & Koenker (1997), they can be
// pooled: all rows above into one row sum_i w_i x_i with a response far
// above, all rows below likewise, and only the rows near the curve kept.
// The pooled problem has the same check-loss gradient as the full one
// wherever the pooled rows keep their signs, so a solution of it at which
// every pooled row (and each pooled sum) lies on its assumed side is an
// exact optimum of the full problem; rows found on the wrong side are
// moved back and the small problem solved again, and after
// bootMaxRepairs such rounds the full problem is solved instead.
//
// References:
//   - Portnoy S, Koenker R (1997). The Gaussian hare and the Laplacian
//     tortoise: computability of squared-error versus absolute-error
//     estimators. Statistical Science 12, 279–300.

// bootKeepScale sets the rows kept near the curve: bootKeepScale *
// sqrt(p * n) of the n drawn rows, at least bootKeepMin * p. A replicate's
// curve moves by about one standard error, which at a quantile puts
// sqrt(tau(1-tau) n) of the rows on the other side; with p coefficients
// the band must hold a few times sqrt(p n) rows (Portnoy & Koenker 1997
// keep sqrt(p) n^(2/3) rows for a cruder start). 3 needed no repair round
// in most replicates of the benchmark (measured, not a published
// constant).
const (
	bootKeepScale  = 3.0
	bootKeepMin    = 20
	bootMaxRepairs = 3
)

// bootGlobMargin places a pooled row's response this many times the data's
// spread (range of y times the pooled row's total |x|) beyond the guess, so
// that no candidate solution within the data's range reaches it.
const bootGlobMargin = 1e3

// bootSolve returns the exact weighted quantile regression coefficients at
// tau of rows y, w on the banded design x, using guess (the point estimate)
// and the rows' spread scale (positive) to pool rows far from the curve.
func bootSolve(pl *pool, x *solver.Design, y, w []float64, tau float64, guess, scale []float64) ([]float64, error) {
	n := len(y)
	p := x.Cols
	keep := int(math.Ceil(bootKeepScale * math.Sqrt(float64(p*n))))
	keep = max(keep, bootKeepMin*p)
	full := func() ([]float64, error) {
		s, err := pl.one(&solver.Problem{Y: y, X: x, W: w, Tau: tau})
		if err != nil {
			return nil, err
		}
		return s.Coef, nil
	}
	if keep >= n/2 {
		return full()
	}
	u := make([]float64, n)
	abs := make([]float64, n)
	lo, hi := math.Inf(1), math.Inf(-1)
	for i := range n {
		u[i] = (y[i] - x.Dot(i, guess)) / scale[i]
		abs[i] = math.Abs(u[i])
		lo, hi = min(lo, y[i]), max(hi, y[i])
	}
	// The keep-th smallest |u| is the band's half-width.
	slices.Sort(abs)
	band := abs[keep-1]
	forced := make([]bool, n)
	dense := make([]float64, p)
	for range bootMaxRepairs + 1 {
		var val, yy, ww []float64
		above, below := make([]float64, p), make([]float64, p)
		nAbove, nBelow := 0, 0
		for i := range n {
			f, v := x.Row(i)
			if forced[i] || math.Abs(u[i]) <= band {
				clear(dense)
				copy(dense[f:], v)
				val = append(val, dense...)
				yy = append(yy, y[i])
				ww = append(ww, w[i])
				continue
			}
			g := above
			if u[i] < 0 {
				g = below
				nBelow++
			} else {
				nAbove++
			}
			for k, xv := range v {
				g[f+k] += w[i] * xv
			}
		}
		type glob struct {
			x    []float64
			sign float64
		}
		var globs []glob
		if nAbove > 0 {
			globs = append(globs, glob{above, 1})
		}
		if nBelow > 0 {
			globs = append(globs, glob{below, -1})
		}
		globY := make([]float64, len(globs))
		for k, g := range globs {
			sum, fit := 0.0, 0.0
			for j, xv := range g.x {
				sum += math.Abs(xv)
				fit += xv * guess[j]
			}
			globY[k] = fit + g.sign*bootGlobMargin*sum*(hi-lo+1)
			val = append(val, g.x...)
			yy = append(yy, globY[k])
			ww = append(ww, 1)
		}
		first := make([]int, len(yy))
		d := &solver.Design{Cols: p, Width: p, First: first, Val: val}
		s, err := pl.one(&solver.Problem{Y: yy, X: d, W: ww, Tau: tau})
		if err != nil {
			return full()
		}
		b := s.Coef
		ok := true
		for k, g := range globs {
			fit := 0.0
			for j, xv := range g.x {
				fit += xv * b[j]
			}
			if (globY[k]-fit)*g.sign <= 0 {
				ok = false
			}
		}
		if !ok {
			return full()
		}
		repaired := false
		for i := range n {
			if forced[i] || math.Abs(u[i]) <= band {
				continue
			}
			r := y[i] - x.Dot(i, b)
			if r*u[i] < 0 {
				forced[i], repaired = true, true
			}
		}
		if !repaired {
			return b, nil
		}
	}
	return full()
}

// one solves the single problem p at p.Tau under a token of the pool.
func (pl *pool) one(p *solver.Problem) (*solver.Solution, error) {
	sols, err := pl.grid(p, []float64{p.Tau}, nil)
	if err != nil {
		return nil, err
	}
	return sols[0], nil
}
