package solver

import (
	"errors"
	"fmt"
	"math"
	"slices"
)

// vertex is an exact optimal vertex of a table.
type vertex struct {
	b       []float64
	basis   []int
	dual    []float64 // per row of the table solved
	iters   int
	repairs int
	method  Method
}

// tieResidual: soft rows whose residual at the answer is within
// tieResidual*max|y| of zero are listed in Solution.Zero with their
// multiplier. It is ten times zeroResidual, so every row the simplex method
// counts as zero is listed and every row left out has a residual whose sign
// no rounding of its recomputation can flip.
const tieResidual = 10 * zeroResidual

// answer is what a solve on the full table found: the vertex in full-table
// rows, the residuals r at it (nil after a reduced solve, whose verifying
// pass lists the zero rows instead), and the multiplier of any soft row.
type answer struct {
	v      *vertex
	r      []float64
	obj    float64
	dualAt func(i int) float64
	mu     []float64 // constraint multipliers
	// zero lists soft rows with |r| <= tieResidual*max|y|, ascending, when
	// r is nil.
	zero []int
}

// solveTable finds the optimal vertex of t by the simplex method (from
// basis, or cold) or by the interior-point method rounded to a vertex and
// finished by the simplex method.
func solveTable(t *table, basis []int, method Method, maxIter int) (*vertex, error) {
	if method == Auto {
		method = Interior
		if t.rows() < SimplexRows {
			method = Simplex
		}
	}
	iters := 0
	if method == Interior {
		// An interior point that fails (it diverges on infeasible
		// constraints) leaves the simplex method to start cold and decide.
		basis = nil
		if b, it, err := interior(t, maxIter, gapTol); err == nil && allFinite(b) {
			iters = it
			basis, _ = crossover(t, b)
		}
	}
	s, err := exact(t, basis, maxIter)
	if err != nil && basis != nil && !errors.Is(err, ErrInfeasible) {
		// A start that leads into a numerically singular basis is
		// abandoned for a cold one rather than reported.
		s, err = exact(t, nil, maxIter)
	}
	if err != nil {
		return nil, err
	}
	return &vertex{b: s.b, basis: s.basis, dual: s.dual(), iters: iters + s.iter, method: method}, nil
}

// solveOn solves the problem pr whose internal form is t (with the costs of
// pr.Tau), starting from start when it fits and is near enough. cr carries
// what a reduced solve on t leaves for the next (see carry): the guess to
// classify rows by, perhaps the classification itself, and the row scales.
func solveOn(t *table, pr *Problem, s *Settings, start *Solution, cr *carry) (*Solution, error) {
	n := pr.X.Rows()
	method := s.Method
	var basis []int
	if start != nil && len(start.Basis) == t.p() && len(start.Coef) == t.p() {
		basis = start.Basis
		for _, i := range basis {
			if i < 0 || i >= t.rows() {
				basis = nil
				break
			}
		}
	}
	var v *vertex
	var err error
	if method != Simplex && !s.NoPreprocess && n > PreprocessRows {
		m := coldMiddle(n, t.p())
		// A neighbour far away in tau (a coarse grid) leaves a band as wide
		// as the shift between the two; a cold start is cheaper then.
		guess := cr.guess
		if guess == nil && start != nil && len(start.Coef) == t.p() {
			guess = start.Coef
		}
		coefOnly := start != nil && len(start.Basis) == 0 && len(start.Coef) == t.p()
		warm := guess != nil && (basis != nil || coefOnly) && nearStart(t, n, pr.Tau, guess)
		if !warm {
			basis = nil
			cr.guess, cr.ready = nil, nil
		} else {
			m = warmMiddle(n, t.p())
			if cr.guess == nil {
				cr.guess = guess
			}
		}
		a, err := solveReduced(t, n, pr.Tau, cr, basis, m, method, s.MaxIter)
		var re *reductionError
		if !errors.As(err, &re) {
			if err != nil {
				return nil, err
			}
			a.v.method = Interior
			return solution(t, a), nil
		}
		// The reduction failed its check twice: solve the whole problem.
		method, basis = Interior, nil
		*cr = carry{}
	}
	if method == Interior {
		basis = nil
	}
	if v, err = solveTable(t, basis, method, s.MaxIter); err != nil {
		return nil, err
	}
	r := make([]float64, t.rows())
	t.residuals(r, v.b)
	obj := t.objective(r)
	dualAt := func(i int) float64 { return v.dual[i] }
	if err := certifyTable(t, v.b, r, dualAt, v.dual[t.nSoft:], obj); err != nil {
		return nil, err
	}
	return solution(t, &answer{v: v, r: r, obj: obj, dualAt: dualAt, mu: v.dual[t.nSoft:]}), nil
}

// nearSample: the share of rows below a neighbouring solution is read off
// this many evenly spaced rows, enough to place it to about 1%.
const nearSample = 2000

// nearStart reports whether the reduction of the first n rows of t at tau
// should start from the neighbouring solution b rather than from a
// subsample: the band of rows kept around b holds the rows between b's
// level and tau, so b pays only when that band, with its margin, is
// smaller than the two problems of a cold start.
func nearStart(t *table, n int, tau float64, b []float64) bool {
	step := max(n/nearSample, 1)
	below, k := 0, 0
	for i := 0; i < n; i += step {
		f, x := t.x.Row(i)
		if t.y[i] < rowDot(x, b, f) {
			below++
		}
		k++
	}
	shift := math.Abs(float64(below)/float64(k)-tau) * float64(n)
	p := t.p()
	return shift+float64(warmMiddle(n, p)) < 2*float64(coldMiddle(n, p))
}

// coldMiddle is the number of rows kept by the reduction of n data rows
// without a neighbouring solution: Portnoy & Koenker's sqrt(p)*n^(2/3).
func coldMiddle(n, p int) int {
	return int(math.Ceil(math.Sqrt(float64(p)) * math.Pow(float64(n), 2.0/3)))
}

// warmMiddleScale: a neighbouring solution places residual ranks to within
// about sqrt(p/n) of the answer's, so the band around its shift in level
// holds warmMiddleScale*sqrt(p*n) extra rows (Chernozhukov, Fernández-Val &
// Melly 2022 keep a band of this order). On the benchmark's growth data a
// 99-tau grid needed no repair at 2 for n = 1e5 and 1e6, one at 1.5 and
// four at 1; 2 keeps a margin (measured, not a published constant).
const warmMiddleScale = 2.0

// warmMiddle is the extra number of rows kept around the shift in level
// when the reduction starts from a neighbouring solution.
func warmMiddle(n, p int) int {
	return max(int(math.Ceil(warmMiddleScale*math.Sqrt(float64(p)*float64(n)))), 4*p)
}

// solution assembles the answer on the caller's numbering: the vertex, its
// objective and the multipliers of the rows with zero residual.
func solution(t *table, a *answer) *Solution {
	v := a.v
	zero := a.zero
	if a.r != nil {
		ys, _ := t.scales()
		zero = zeroRows(a.r[:t.nSoft], tieResidual*ys, nil)
	}
	// Basis rows have zero residual; list them even if rounding says not.
	for _, i := range v.basis {
		if k, found := slices.BinarySearch(zero, i); !found && i < t.nSoft {
			zero = slices.Insert(zero, k, i)
		}
	}
	zd := make([]float64, len(zero))
	for k, i := range zero {
		zd[k] = a.dualAt(i)
	}
	status := Optimal
	_, cs := t.scales()
	for _, i := range v.basis {
		if i >= t.nSoft {
			if a.mu[i-t.nSoft] <= tiedMultiplier*cs {
				status = OptimalTied
			}
			continue
		}
		d, lo, hi := a.dualAt(i), -t.c[i], t.a[i]
		if m := tiedMultiplier * (hi - lo); d <= lo+m || d >= hi-m {
			status = OptimalTied
		}
	}
	return &Solution{
		Status:         status,
		Coef:           slices.Clone(v.b),
		Objective:      a.obj,
		Iterations:     v.iters,
		Method:         v.method,
		Basis:          slices.Clone(v.basis),
		Zero:           zero,
		ZeroDual:       zd,
		ConstraintDual: slices.Clone(a.mu),
		Reductions:     v.repairs,
	}
}

// zeroRows appends to dst the rows i with |r_i| <= tol, in order.
func zeroRows(r []float64, tol float64, dst []int) []int {
	for i, ri := range r {
		if math.Abs(ri) <= tol {
			dst = append(dst, i)
		}
	}
	return dst
}

func solveGrid(pr *Problem, taus []float64, s *Settings) ([]*Solution, error) {
	if s == nil {
		s = &Settings{}
	}
	order := make([]int, len(taus))
	for i := range order {
		order[i] = i
	}
	slices.SortFunc(order, func(i, j int) int {
		switch {
		case taus[i] < taus[j]:
			return -1
		case taus[i] > taus[j]:
			return 1
		}
		return 0
	})
	out := make([]*Solution, len(taus))
	if len(taus) == 0 {
		return out, nil
	}
	// Validate and build the table once; only the data rows' costs depend
	// on tau (and, when ordered, the bounds of the ordering rows).
	q := *pr
	q.Tau = taus[order[0]]
	for _, tau := range taus {
		if !(tau > 0 && tau < 1) {
			q.Tau = tau
			break
		}
	}
	nG, p := len(pr.G), pr.X.Cols
	if s.Ordered {
		// p ordering rows after the problem's own constraints; order sets
		// their signs and bounds at each step.
		q.G = slices.Grow(slices.Clip(pr.G), p)
		q.H = append(slices.Clip(pr.H), make([]float64, p)...)
		for j := range p {
			g := make([]float64, p)
			g[j] = 1
			q.G = append(q.G, g)
		}
	}
	if err := q.validate(); err != nil {
		return nil, err
	}
	t := newTable(&q)
	// base is the table without the ordering rows, for the first tau.
	base := t
	if s.Ordered {
		base = t.firstHard(nG)
	}
	if _, err := coldBasis(base); err != nil {
		return nil, err
	}
	// Start at the tau nearest the median and walk outwards both ways.
	mid := 0
	for k, i := range order {
		if math.Abs(taus[i]-0.5) < math.Abs(taus[order[mid]]-0.5) {
			mid = k
		}
	}
	one := func(tab *table, k int, from *Solution, cr *carry) (*Solution, error) {
		q.Tau = taus[order[k]]
		tab.setTau(&q)
		return solveOn(tab, &q, s, from, cr)
	}
	// Each solve also classifies the rows for the next tau (cr.ahead).
	n := pr.X.Rows()
	aheadOf := func(k, dir int, before []float64) *ahead {
		if k+dir < 0 || k+dir >= len(order) {
			return nil
		}
		ah := &ahead{tau: taus[order[k+dir]], m: warmMiddle(n, p), before: before}
		if before != nil {
			ah.tauBefore = taus[order[k-dir]]
		}
		return ah
	}
	dirs := []int{1, -1}
	if mid == len(order)-1 {
		dirs = []int{-1, 1} // nothing above: classify for the side below
	}
	cr := &carry{ahead: aheadOf(mid, dirs[0], nil)}
	first, err := one(base, mid, s.Start, cr)
	if err != nil {
		return nil, fmt.Errorf("tau %g: %w", taus[order[mid]], err)
	}
	out[order[mid]] = first
	if s.Solved != nil {
		s.Solved(taus[order[mid]])
	}
	for d, dir := range dirs {
		prev := first
		if d > 0 {
			// Back at the median: the rows were classified for the other
			// side.
			cr.guess, cr.ready = first.Coef, nil
		}
		for k := mid + dir; k >= 0 && k < len(order); k += dir {
			cr.ahead = aheadOf(k, dir, prev.Coef)
			if s.Ordered {
				t.order(nG, dir, prev.Coef)
			}
			sol, err := one(t, k, prev, cr)
			if err != nil {
				return nil, fmt.Errorf("tau %g: %w", taus[order[k]], err)
			}
			out[order[k]] = sol
			prev = sol
			if s.Solved != nil {
				s.Solved(taus[order[k]])
			}
		}
	}
	return out, nil
}

func allFinite(x []float64) bool {
	for _, v := range x {
		if !finite(v) {
			return false
		}
	}
	return true
}
