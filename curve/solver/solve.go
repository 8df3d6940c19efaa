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

// toFull renumbers v from the rows of t to the rows of full.
func (v *vertex) toFull(t *table, full *table) {
	if t.orig == nil {
		return
	}
	for k, i := range v.basis {
		v.basis[k] = t.orig[i]
	}
	d := make([]float64, full.rows())
	for k, i := range t.orig {
		if i >= 0 {
			d[i] = v.dual[k]
		}
	}
	v.dual = d
}

func solve(pr *Problem, s *Settings) (*Solution, error) {
	if err := pr.validate(); err != nil {
		return nil, err
	}
	if s == nil {
		s = &Settings{}
	}
	t := newTable(pr)
	n := pr.X.Rows()
	if _, err := coldBasis(t); err != nil {
		return nil, err
	}
	method := s.Method
	var start []int
	if s.Start != nil && len(s.Start.Basis) == t.p() && len(s.Start.Coef) == t.p() {
		start = s.Start.Basis
		for _, i := range start {
			if i < 0 || i >= t.rows() {
				start = nil
				break
			}
		}
	}
	var v *vertex
	var err error
	if method != Simplex && !s.NoPreprocess && n > PreprocessRows {
		q := float64(t.p())
		m := int(math.Ceil(math.Sqrt(q) * math.Pow(float64(n), 2.0/3)))
		guess := s.Start
		if start == nil {
			guess = nil
		} else {
			m = max(m/3, 4*t.p())
		}
		v, err = solveReduced(t, n, pr.Tau, guess, m, method, s.MaxIter)
		if v != nil {
			v.method = Interior
		}
	} else {
		if method == Interior {
			start = nil
		}
		v, err = solveTable(t, start, method, s.MaxIter)
	}
	if err != nil {
		return nil, err
	}
	return solution(pr, t, v), nil
}

// solution assembles the answer on the caller's numbering.
func solution(pr *Problem, t *table, v *vertex) *Solution {
	r := make([]float64, t.rows())
	t.residuals(r, v.b)
	obj := t.objective(r)
	ns := t.nSoft
	return &Solution{
		Coef:           slices.Clone(v.b),
		Objective:      obj,
		Iterations:     v.iters,
		Method:         v.method,
		Basis:          slices.Clone(v.basis),
		Dual:           slices.Clone(v.dual[:ns]),
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
	// Start at the tau nearest the median and walk outwards both ways.
	mid := 0
	for k, i := range order {
		if math.Abs(taus[i]-0.5) < math.Abs(taus[order[mid]]-0.5) {
			mid = k
		}
	}
	q := *pr
	one := func(k int, from *Solution) (*Solution, error) {
		q.Tau = taus[order[k]]
		st := *s
		st.Start = from
		return Solve(&q, &st)
	}
	first, err := one(mid, s.Start)
	if err != nil {
		return nil, err
	}
	out[order[mid]] = first
	for _, dir := range []int{1, -1} {
		prev := first
		for k := mid + dir; k >= 0 && k < len(order); k += dir {
			sol, err := one(k, prev)
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
