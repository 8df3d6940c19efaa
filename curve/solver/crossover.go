package solver

import (
	"cmp"
	"fmt"
	"math"
	"slices"
)

// crossoverCandidates: rows whose normalised residual at the interior
// point is below crossoverCandidates*max|y| are tried first as conditions of
// the vertex.
const crossoverCandidates = 1e-6

// phaseOneSlack: a phase-one optimum whose total constraint violation is
// above phaseOneSlack*max|y| per constraint means the constraints are
// infeasible.
const phaseOneSlack = 1e-9

// crossover rounds an approximate solution b to a basis: the p independent
// conditions closest to holding with equality.
func crossover(t *table, b []float64) ([]int, error) {
	n, p := t.rows(), t.p()
	r := make([]float64, n)
	t.residuals(r, b)
	key := make([]float64, n)
	ys, _ := t.scales()
	var first []int
	for i := range r {
		_, v := t.row(i)
		nrm := math.Sqrt(dot(v, v))
		if nrm == 0 || (i < t.nSoft && t.a[i]+t.c[i] == 0) {
			key[i] = math.Inf(1)
			continue
		}
		key[i] = math.Abs(r[i]) / nrm
		if key[i] < crossoverCandidates*ys {
			first = append(first, i)
		}
	}
	byKey := func(i, j int) int { return cmp.Compare(key[i], key[j]) }
	slices.SortFunc(first, byKey)
	g := newGramSchmidt(p)
	row := make([]float64, p)
	for _, i := range first {
		t.dense(row, i)
		g.add(i, row)
		if len(g.basis) == p {
			return g.basis, nil
		}
	}
	all := make([]int, 0, n)
	for i := range key {
		if !math.IsInf(key[i], 1) {
			all = append(all, i)
		}
	}
	slices.SortFunc(all, byKey)
	for _, i := range all {
		if slices.Contains(g.basis, i) {
			continue
		}
		t.dense(row, i)
		g.add(i, row)
		if len(g.basis) == p {
			return g.basis, nil
		}
	}
	return nil, fmt.Errorf("%w: rank %d < %d coefficients", ErrRankDeficient, len(g.basis), p)
}

// gramSchmidt collects independent rows.
type gramSchmidt struct {
	q     [][]float64
	basis []int
}

func newGramSchmidt(p int) *gramSchmidt { return &gramSchmidt{q: make([][]float64, 0, p)} }

// add appends row (which it overwrites) as condition i when it is
// independent of those already held.
func (g *gramSchmidt) add(i int, row []float64) bool {
	norm := math.Sqrt(dot(row, row))
	if norm == 0 {
		return false
	}
	for pass := 0; pass < 2; pass++ {
		for _, e := range g.q {
			d := dot(row, e)
			for j := range row {
				row[j] -= d * e[j]
			}
		}
	}
	rn := math.Sqrt(dot(row, row))
	if rn <= independence*norm {
		return false
	}
	e := make([]float64, len(row))
	for j := range row {
		e[j] = row[j] / rn
	}
	g.q = append(g.q, e)
	g.basis = append(g.basis, i)
	return true
}

// exact runs the simplex method on t from basis (or from a cold basis when
// basis is nil or singular), first restoring feasibility of the hard
// constraints when the starting vertex violates them.
func exact(t *table, basis []int, maxIter int) (*simplex, error) {
	var s *simplex
	var err error
	if basis != nil {
		s, err = newSimplex(t, basis, maxIter)
	}
	if basis == nil || err != nil {
		if basis, err = coldBasis(t); err != nil {
			return nil, err
		}
		if s, err = newSimplex(t, basis, maxIter); err != nil {
			return nil, err
		}
	}
	iters := 0
	if !s.feasible() {
		one := phaseOne(t)
		s1, err := newSimplex(one, s.basis, maxIter)
		if err != nil {
			return nil, err
		}
		if err := s1.run(); err != nil {
			return nil, err
		}
		ys, _ := t.scales()
		m := t.rows() - t.nSoft
		if v := one.objective(s1.r); v > phaseOneSlack*ys*float64(m) {
			return nil, fmt.Errorf("%w: least total violation %.3g", ErrInfeasible, v)
		}
		iters = s1.iter
		if s, err = newSimplex(t, s1.basis, maxIter); err != nil {
			return nil, err
		}
	}
	s.iter = iters
	if err := s.run(); err != nil {
		return nil, err
	}
	return s, nil
}

// phaseOne returns the problem of minimising the total violation of t's hard
// constraints: they become soft rows that cost only when violated, and the
// other rows cost nothing.
func phaseOne(t *table) *table {
	n := t.rows()
	one := &table{x: t.x, wide: t.wide, y: t.y, a: make([]float64, n), c: make([]float64, n), nSoft: n}
	for i := t.nSoft; i < n; i++ {
		one.a[i] = 1
	}
	return one
}
