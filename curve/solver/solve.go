package solver

import (
	"errors"
	"math"
	"slices"
)

// vertex is an exact optimal vertex of a table.
type vertex struct {
	b       []float64
	basis   []int
	dual    []float64
	iters   int
	repairs int
	method  Method
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
		if b, it, err := interior(t, maxIter); err == nil && allFinite(b) {
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

func solve(pr *Problem, s *Settings) (*Solution, error) {
	if err := pr.validate(); err != nil {
		return nil, err
	}
	if s == nil {
		s = &Settings{}
	}
	t := newTable(pr)
	if _, err := coldBasis(t); err != nil {
		return nil, err
	}
	sol, err := solveOn(t, pr, s, s.Start, &carry{})
	return sol, err
}

// solveOn solves the problem pr whose internal form is t (with the costs of
// pr.Tau), starting from start when it fits. cr carries residuals and row
// scales from solving a neighbouring problem on t (cr.r holds start's
// residuals, or is nil); on return cr.r holds the residuals at the answer.
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
		if basis == nil {
			cr.r = nil
		} else {
			m = warmMiddle(n, t.p())
			if cr.r == nil {
				cr.alloc(t.rows())
				t.residuals(cr.r, start.Coef)
			}
		}
		v, err = solveReduced(t, n, pr.Tau, cr, basis, m, method, s.MaxIter)
		if err != nil {
			return nil, err
		}
		v.method = Interior
		return solution(t, v, cr.obj), nil
	}
	if method == Interior {
		basis = nil
	}
	if v, err = solveTable(t, basis, method, s.MaxIter); err != nil {
		return nil, err
	}
	cr.r = resize(cr.r, t.rows())
	t.residuals(cr.r, v.b)
	return solution(t, v, t.objective(cr.r)), nil
}

// coldMiddle is the number of rows kept by the reduction of n data rows
// without a neighbouring solution: Portnoy & Koenker's sqrt(p)*n^(2/3).
func coldMiddle(n, p int) int {
	return int(math.Ceil(math.Sqrt(float64(p)) * math.Pow(float64(n), 2.0/3)))
}

// warmMiddleScale: a neighbouring solution places residual ranks to within
// about sqrt(p/n) of the answer's, so the band around its shift in level
// holds warmMiddleScale*sqrt(p*n) extra rows (Chernozhukov, Fernández-Val &
// Melly 2022 keep a band of this order).
const warmMiddleScale = 3.0

// warmMiddle is the extra number of rows kept around the shift in level
// when the reduction starts from a neighbouring solution.
func warmMiddle(n, p int) int {
	return max(int(math.Ceil(warmMiddleScale*math.Sqrt(float64(p)*float64(n)))), 4*p)
}

// solution assembles the answer on the caller's numbering from the vertex
// and the objective at it.
func solution(t *table, v *vertex, obj float64) *Solution {
	ns := t.nSoft
	return &Solution{
		Coef:           slices.Clone(v.b),
		Objective:      obj,
		Iterations:     v.iters,
		Method:         v.method,
		Basis:          slices.Clone(v.basis),
		Dual:           v.dual[:ns:ns],
		ConstraintDual: slices.Clone(v.dual[ns:]),
		Reductions:     v.repairs,
	}
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
	// on tau.
	q := *pr
	q.Tau = taus[order[0]]
	for _, tau := range taus {
		if !(tau > 0 && tau < 1) {
			q.Tau = tau
			break
		}
	}
	if err := q.validate(); err != nil {
		return nil, err
	}
	t := newTable(&q)
	if _, err := coldBasis(t); err != nil {
		return nil, err
	}
	// Start at the tau nearest the median and walk outwards both ways.
	mid := 0
	for k, i := range order {
		if math.Abs(taus[i]-0.5) < math.Abs(taus[order[mid]]-0.5) {
			mid = k
		}
	}
	one := func(k int, from *Solution, cr *carry) (*Solution, error) {
		q.Tau = taus[order[k]]
		t.setTau(&q)
		return solveOn(t, &q, s, from, cr)
	}
	cr := &carry{}
	first, err := one(mid, s.Start, cr)
	if err != nil {
		return nil, err
	}
	out[order[mid]] = first
	r0 := slices.Clone(cr.r)
	for _, dir := range []int{1, -1} {
		prev := first
		if dir < 0 {
			copy(cr.r, r0)
		}
		for k := mid + dir; k >= 0 && k < len(order); k += dir {
			sol, err := one(k, prev, cr)
			if err != nil {
				return nil, err
			}
			out[order[k]] = sol
			prev = sol
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
