package solver

import (
	"fmt"
	"math"
	"slices"

	"gonum.org/v1/gonum/mat"
)

// Tolerances of the simplex method, relative to the problem's scales.
const (
	// zeroResidual: a residual below zeroResidual*max|y| counts as zero.
	zeroResidual = 1e-10
	// optimalSlope: an edge whose directional derivative exceeds
	// -optimalSlope*max(cost) is not a descent edge.
	optimalSlope = 1e-11
	// condLimit: a basis matrix with a larger condition number is singular.
	condLimit = 1e13
	// independence: a row whose part orthogonal to the rows already chosen
	// is below independence times its norm is dependent on them.
	independence = 1e-9
	// flatEdge: a row whose change along a unit edge is below flatEdge times
	// the edge's length does not move with it (rounding, not geometry).
	flatEdge = 1e-11
	// blandAfter: consecutive zero-length pivots (times p) before the
	// smallest-index rule replaces steepest edge, so degenerate vertices
	// cannot make the method cycle (Bland 1977).
	blandAfter = 2
)

// simplex is the state of an edge-descending simplex method on a table.
//
// A vertex is defined by p conditions: soft rows with zero residual or hard
// constraints holding with equality. Each step leaves one condition along an
// edge of the piecewise-linear objective, walks down the edge past as many
// breakpoints as keep the slope negative, and takes the row at which the
// slope turns non-negative as the new condition. This is the long-step
// variant of Barrodale & Roberts for L1 problems, applied to asymmetric row
// costs and with hard constraints that block a step.
//
// References:
//   - Barrodale, I. & Roberts, F. D. K. (1973). An improved algorithm for
//     discrete l1 linear approximation. SIAM J. Numer. Anal. 10, 839–848.
//   - Koenker, R. & d'Orey, V. (1987). Computing regression quantiles.
//     Applied Statistics 36, 383–393.
//   - Bland, R. G. (1977). New finite pivoting rules for the simplex method.
//     Mathematics of Operations Research 2, 103–107.
type simplex struct {
	t     *table
	p     int
	basis []int
	pos   []int  // position of each row in basis, or -1
	side  []int8 // sign taken for each non-basic soft row's residual
	b, r  []float64
	ainv  *mat.Dense
	lu    mat.LU
	amat  *mat.Dense
	g, z  []float64
	col   []float64
	norms []float64
	bps   []breakpoint
	// passed holds the rows whose breakpoints a step has passed.
	passed []int
	row    []float64

	tolZero, tolSlope float64
	iter, maxIter     int
	degenerate        int
}

type breakpoint struct {
	t, inc float64
	i      int
}

// errSingular reports a basis whose conditions are not independent.
var errSingular = fmt.Errorf("%w: basis conditions are dependent", ErrRankDeficient)

func newSimplex(t *table, basis []int, maxIter int) (*simplex, error) {
	p := t.p()
	n := t.rows()
	s := &simplex{
		t: t, p: p,
		basis: slices.Clone(basis),
		pos:   make([]int, n),
		side:  make([]int8, n),
		b:     make([]float64, p),
		r:     make([]float64, n),
		ainv:  mat.NewDense(p, p, nil),
		amat:  mat.NewDense(p, p, nil),
		g:     make([]float64, p),
		z:     make([]float64, p),
		col:   make([]float64, p),
		norms: make([]float64, p),
		row:   make([]float64, p),
	}
	ys, cs := t.scales()
	s.tolZero = zeroResidual * ys
	s.tolSlope = optimalSlope * cs
	s.maxIter = maxIter
	if s.maxIter <= 0 {
		s.maxIter = 50*(n+p) + 1000
	}
	for i := range s.pos {
		s.pos[i] = -1
	}
	for k, i := range basis {
		if i < 0 || i >= n || s.pos[i] >= 0 {
			panic(fmt.Sprintf("solver: bad basis entry %d", i))
		}
		s.pos[i] = k
	}
	for i := range s.side {
		s.side[i] = 1
	}
	if err := s.factor(); err != nil {
		return nil, err
	}
	return s, nil
}

// factor solves for the vertex of the current basis and refreshes residuals
// and sides.
func (s *simplex) factor() error {
	p := s.p
	rhs := make([]float64, p)
	for k, i := range s.basis {
		s.t.dense(s.row, i)
		s.amat.SetRow(k, s.row)
		rhs[k] = s.t.y[i]
	}
	s.lu.Factorize(s.amat)
	if c := s.lu.Cond(); math.IsInf(c, 0) || c > condLimit {
		return errSingular
	}
	bv := mat.NewVecDense(p, s.b)
	if err := s.lu.SolveVecTo(bv, false, mat.NewVecDense(p, rhs)); err != nil {
		return errSingular
	}
	eye := mat.NewDiagDense(p, nil)
	for k := 0; k < p; k++ {
		eye.SetDiag(k, 1)
	}
	if err := s.lu.SolveTo(s.ainv, false, eye); err != nil {
		return errSingular
	}
	for k := 0; k < p; k++ {
		s.norms[k] = mat.Norm(s.ainv.ColView(k), 2)
	}
	s.t.residuals(s.r, s.b)
	for i, r := range s.r {
		if s.pos[i] >= 0 {
			s.r[i] = 0
			continue
		}
		if r > s.tolZero {
			s.side[i] = 1
		} else if r < -s.tolZero {
			s.side[i] = -1
		}
	}
	return nil
}

// feasible reports whether every hard constraint holds at the vertex.
func (s *simplex) feasible() bool {
	for i := s.t.nSoft; i < s.t.rows(); i++ {
		if s.r[i] > s.tolZero {
			return false
		}
	}
	return true
}

// psi is the derivative of row i's cost with respect to its residual.
func (s *simplex) psi(i int) float64 {
	if s.side[i] > 0 {
		return s.t.a[i]
	}
	return -s.t.c[i]
}

// gradient computes g = - sum over non-basic soft rows psi_i x_i and
// z = A^-T g, the multipliers of the basic conditions.
func (s *simplex) gradient() {
	clear(s.g)
	for i := 0; i < s.t.nSoft; i++ {
		if s.pos[i] < 0 {
			s.t.addRow(s.g, i, -s.psi(i))
		}
	}
	// z = A^-T g, i.e. z_k = sum_j ainv[j][k] g_j.
	for k := 0; k < s.p; k++ {
		z := 0.0
		for j := 0; j < s.p; j++ {
			z += s.ainv.At(j, k) * s.g[j]
		}
		s.z[k] = z
	}
}

// slopes returns the directional derivatives of leaving basic condition k
// in direction +A^-1 e_k (up) and -A^-1 e_k (down); down is +Inf for a hard
// constraint, which may only be left towards feasibility.
func (s *simplex) slopes(k int) (up, down float64) {
	i := s.basis[k]
	if i >= s.t.nSoft {
		return s.z[k], math.Inf(1)
	}
	return s.z[k] + s.t.c[i], s.t.a[i] - s.z[k]
}

// entering picks the basic condition to leave and the direction, or -1
// when the vertex is optimal.
func (s *simplex) entering(bland bool) (k int, dir float64) {
	k, best := -1, 0.0
	for j := 0; j < s.p; j++ {
		up, down := s.slopes(j)
		for _, e := range [2]struct{ d, dir float64 }{{up, 1}, {down, -1}} {
			// Relative to the terms that make up the slope.
			if e.d >= -s.tolSlope-optimalSlope*math.Abs(s.z[j]) {
				continue
			}
			score := e.d / s.norms[j]
			if bland {
				if k < 0 || s.basis[j] < s.basis[k] {
					k, dir = j, e.dir
				}
				continue
			}
			if k < 0 || score < best {
				k, best, dir = j, score, e.dir
			}
		}
	}
	return k, dir
}

// step walks along the edge leaving basic condition k in direction dir and
// returns the row entering the basis and the step length.
func (s *simplex) step(k int, dir float64, slope float64, bland bool) (enter int, length float64, err error) {
	t := s.t
	s.bps = s.bps[:0]
	flat := flatEdge * s.norms[k]
	col := mat.Col(s.col, k, s.ainv)
	for i := 0; i < t.rows(); i++ {
		if s.pos[i] >= 0 {
			continue
		}
		f, xv := t.row(i)
		v := 0.0
		for m, x := range xv {
			v += x * col[f+m]
		}
		v *= dir
		if math.Abs(v) <= flat {
			continue
		}
		if i >= t.nSoft {
			// slack g'b - h = -r grows by v per unit step.
			if v < 0 {
				s.bps = append(s.bps, breakpoint{t: math.Max(-s.r[i], 0) / -v, inc: math.Inf(1), i: i})
			}
			continue
		}
		cost := t.a[i] + t.c[i]
		if cost == 0 {
			continue
		}
		// the residual r - t*v reaches zero from the side taken.
		if s.side[i] > 0 && v > 0 {
			s.bps = append(s.bps, breakpoint{t: math.Max(s.r[i], 0) / v, inc: cost * v, i: i})
		} else if s.side[i] < 0 && v < 0 {
			s.bps = append(s.bps, breakpoint{t: math.Min(s.r[i], 0) / v, inc: -cost * v, i: i})
		}
	}
	// Breakpoints are taken in order of t from a heap: a long step passes
	// few of the many, so sorting them all would cost most of the step.
	h := bpHeap{bps: s.bps, bland: bland}
	h.init()
	// The slope is a sum of terms; rounding is relative to their size.
	size := math.Abs(slope)
	s.passed = s.passed[:0]
	for len(h.bps) > 0 {
		bp := h.pop()
		slope += bp.inc
		size += bp.inc
		// Under the smallest-index rule every step is a plain pivot to the
		// first breakpoint, which cannot cycle (Bland 1977).
		if bland || slope >= -optimalSlope*size {
			for _, i := range s.passed {
				s.side[i] = -s.side[i]
			}
			return bp.i, bp.t, nil
		}
		s.passed = append(s.passed, bp.i)
	}
	return -1, 0, fmt.Errorf("%w: objective unbounded along an edge", ErrRankDeficient)
}

// bpHeap is a binary min-heap of breakpoints by t, then, under the
// smallest-index rule, by row.
type bpHeap struct {
	bps   []breakpoint
	bland bool
}

func (h *bpHeap) less(a, b int) bool {
	x, y := h.bps[a], h.bps[b]
	if x.t != y.t || !h.bland {
		return x.t < y.t
	}
	return x.i < y.i
}

func (h *bpHeap) init() {
	for k := len(h.bps)/2 - 1; k >= 0; k-- {
		h.down(k)
	}
}

func (h *bpHeap) down(k int) {
	n := len(h.bps)
	for {
		c := 2*k + 1
		if c >= n {
			return
		}
		if c+1 < n && h.less(c+1, c) {
			c++
		}
		if !h.less(c, k) {
			return
		}
		h.bps[k], h.bps[c] = h.bps[c], h.bps[k]
		k = c
	}
}

// pop removes and returns the least breakpoint.
func (h *bpHeap) pop() breakpoint {
	top := h.bps[0]
	last := len(h.bps) - 1
	h.bps[0] = h.bps[last]
	h.bps = h.bps[:last]
	h.down(0)
	return top
}

// run descends until the vertex is optimal.
func (s *simplex) run() error {
	for {
		s.gradient()
		bland := s.degenerate >= blandAfter*s.p
		k, dir := s.entering(bland)
		if k < 0 {
			return nil
		}
		if s.iter >= s.maxIter {
			return fmt.Errorf("%w: %d simplex pivots", ErrNoConverge, s.iter)
		}
		up, down := s.slopes(k)
		slope := up
		if dir < 0 {
			slope = down
		}
		enter, length, err := s.step(k, dir, slope, bland)
		if err != nil {
			return err
		}
		leave := s.basis[k]
		s.basis[k] = enter
		s.pos[enter] = k
		s.pos[leave] = -1
		if leave < s.t.nSoft {
			// leaving up makes its residual negative, down positive.
			s.side[leave] = int8(-dir)
		}
		if length*s.norms[k] <= s.tolZero {
			s.degenerate++
		} else {
			s.degenerate = 0
		}
		s.iter++
		if err := s.factor(); err != nil {
			return err
		}
	}
}

// dual returns the multiplier of every row at an optimal vertex: psi_i for
// non-basic soft rows, z_k for basic ones, and for hard rows mu >= 0.
func (s *simplex) dual() []float64 {
	d := make([]float64, s.t.rows())
	for i := range d {
		switch {
		case s.pos[i] >= 0:
			d[i] = s.z[s.pos[i]]
		case i < s.t.nSoft:
			d[i] = s.psi(i)
		}
	}
	return d
}

// coldCandidates: a cold basis is chosen among this many rows per
// coefficient, spread over the table, before all rows are tried.
const coldCandidates = 40

// coldBasis chooses p independent rows with positive cost to start from:
// among rows spread over the table, repeatedly the one farthest from the
// span of those already chosen (pivoted Gram–Schmidt), which keeps the basis
// well conditioned.
func coldBasis(t *table) ([]int, error) {
	p, n := t.p(), t.nSoft
	stride := max(n/(coldCandidates*p), 1)
	var cand []int
	for i := 0; i < n; i += stride {
		if t.a[i]+t.c[i] > 0 {
			cand = append(cand, i)
		}
	}
	rows := make([][]float64, len(cand))
	for k, i := range cand {
		rows[k] = make([]float64, p)
		t.dense(rows[k], i)
	}
	norms := make([]float64, len(cand))
	for k, r := range rows {
		norms[k] = math.Sqrt(dot(r, r))
	}
	var basis []int
	for len(basis) < p {
		best, bestK := 0.0, -1
		for k, r := range rows {
			if norms[k] == 0 {
				continue
			}
			if rn := math.Sqrt(dot(r, r)) / norms[k]; rn > best {
				best, bestK = rn, k
			}
		}
		if bestK < 0 || best <= independence {
			break
		}
		e := rows[bestK]
		en := math.Sqrt(dot(e, e))
		e = slices.Clone(e)
		for j := range e {
			e[j] /= en
		}
		basis = append(basis, cand[bestK])
		norms[bestK] = 0
		for k, r := range rows {
			if norms[k] == 0 {
				continue
			}
			d := dot(r, e)
			for j := range r {
				r[j] -= d * e[j]
			}
		}
	}
	if len(basis) == p {
		return basis, nil
	}
	// Fall back to every row, in order.
	g := newGramSchmidt(p)
	row := make([]float64, p)
	for _, i := range basis {
		t.dense(row, i)
		g.add(i, row)
	}
	for i := 0; i < n && len(g.basis) < p; i++ {
		if t.a[i]+t.c[i] <= 0 || slices.Contains(g.basis, i) {
			continue
		}
		t.dense(row, i)
		g.add(i, row)
	}
	if len(g.basis) == p {
		return g.basis, nil
	}
	return nil, fmt.Errorf("%w: rank %d < %d coefficients", ErrRankDeficient, len(g.basis), p)
}

func dot(x, y []float64) float64 {
	s := 0.0
	for i, v := range x {
		s += v * y[i]
	}
	return s
}
