package solver

import (
	"fmt"
	"math"
	"math/rand/v2"
	"slices"
	"testing"

	"gonum.org/v1/gonum/mat"
)

// The optimality certificate checked here is derived from the primal LP alone,
// not from the solver's internals.
//
// Conventions. Every data row i has residual r_i = y_i - x_i'b, cost
// a_i = tau*w_i for r_i > 0 and c_i = (1-tau)*w_i for r_i < 0. Every penalty
// row j is a pseudo-observation with y = 0, so r_j = -d_j'b and
// a_j = c_j = lambda. Constraint j has slack s_j = g_j'b - h_j >= 0.
//
// With the Lagrangian L(b, mu) = sum_i f_i(y_i - x_i'b) - mu'(G b - h), where
// f_i is the two-slope loss of row i, 0 in the subdifferential of L gives
// -X'd - D'd_pen - G'mu = 0 with d_i in the subdifferential of f_i at r_i:
//
//	d_i = a_i if r_i > 0,  d_i = -c_i if r_i < 0,  d_i in [-c_i, a_i] if r_i = 0
//	X'd + D'd_pen + G'mu = 0,  mu >= 0,  mu_j = 0 where s_j > 0.
//
// The dual LP is: maximise y'd + h'mu over the same set, and
// primal - dual = sum_i (f_i(r_i) - r_i d_i) + s'mu >= 0 (exact identity), so a
// zero gap proves optimality. This matches the sign convention documented on
// Solution.Zero ("X'd + D'd_pen + G'mu = 0", d_i in [-c_i, a_i]).

// certMaxCond bounds the condition number of the basis rows: above it the
// listed conditions do not define a vertex in floating point (common practice).
const certMaxCond = 1e12

// checkCertificate fails t unless sol is a verified optimal vertex of p. tol
// is relative: every test compares |lhs - rhs| with tol*(1 + the sum of the
// absolute values of the terms involved), the rounding-error scale.
func checkCertificate(t testing.TB, p *Problem, sol *Solution, tol float64) {
	t.Helper()
	errs := certificateErrors(p, sol, tol)
	const show = 8 // enough to diagnose without flooding the log
	for k, e := range errs {
		if k == show {
			t.Errorf("certificate: ... and %d more", len(errs)-show)
			break
		}
		t.Errorf("certificate: %s", e)
	}
}

// certificateErrors returns every violated condition of the certificate.
func certificateErrors(p *Problem, sol *Solution, tol float64) []string {
	var errs []string
	bad := func(format string, args ...any) { errs = append(errs, fmt.Sprintf(format, args...)) }
	if sol == nil {
		return []string{"nil solution"}
	}
	n, q := p.X.Rows(), p.X.Cols
	r := 0
	if p.Penalty != nil {
		r = p.Penalty.Rows()
	}
	m := len(p.G)
	if len(sol.Coef) != q || len(sol.Zero) != len(sol.ZeroDual) || len(sol.ConstraintDual) != m {
		bad("shape: %d coefficients, %d zero rows with %d duals, %d constraint duals; want %d, equal, %d",
			len(sol.Coef), len(sol.Zero), len(sol.ZeroDual), len(sol.ConstraintDual), q, m)
		return errs
	}
	for k, i := range sol.Zero {
		if i < 0 || i >= n+r || (k > 0 && i <= sol.Zero[k-1]) {
			bad("zero rows not increasing soft rows: %v", sol.Zero)
			return errs
		}
	}
	for _, v := range [][]float64{sol.Coef, sol.ZeroDual, sol.ConstraintDual, {sol.Objective}} {
		for _, x := range v {
			if !finite(x) {
				bad("non-finite value in solution")
				return errs
			}
		}
	}
	b := sol.Coef

	// Rows: data then penalty, as (design, row index, y, a, c).
	type rowRef struct {
		d    *Design
		i    int
		y    float64
		a, c float64
	}
	rows := make([]rowRef, 0, n+r)
	for i := 0; i < n; i++ {
		w := 1.0
		if p.W != nil {
			w = p.W[i]
		}
		rows = append(rows, rowRef{p.X, i, p.Y[i], p.Tau * w, (1 - p.Tau) * w})
	}
	for j := 0; j < r; j++ {
		rows = append(rows, rowRef{p.Penalty, j, 0, p.Lambda, p.Lambda})
	}
	residual := func(k int) (res, scale float64) {
		rw := rows[k]
		f, v := rw.d.Row(rw.i)
		scale = math.Abs(rw.y)
		for l, x := range v {
			scale += math.Abs(x * b[f+l])
		}
		return rw.y - rw.d.Dot(rw.i, b), scale
	}
	slack := func(j int) (s, scale float64) {
		s, scale = -p.H[j], math.Abs(p.H[j])
		for k, g := range p.G[j] {
			s += g * b[k]
			scale += math.Abs(g * b[k])
		}
		return s, scale
	}

	// Objective recomputed from Coef, and the multipliers expanded: those of
	// the rows listed in Zero as given, the others by their residual's sign
	// (the convention documented on Solution.Zero), computed here anew.
	obj := 0.0
	duals := make([]float64, n+r)
	for k, rw := range rows {
		res, _ := residual(k)
		if res > 0 {
			obj += rw.a * res
			duals[k] = rw.a
		} else {
			obj -= rw.c * res
			if res < 0 {
				duals[k] = -rw.c
			}
		}
	}
	for k, i := range sol.Zero {
		duals[i] = sol.ZeroDual[k]
	}
	if got := sol.Duals(p); !slices.Equal(got, duals) {
		bad("Solution.Duals disagrees with the certificate's expansion of Zero")
	}
	if math.Abs(obj-sol.Objective) > tol*(1+math.Abs(obj)) {
		bad("objective %.15g, recomputed from Coef %.15g", sol.Objective, obj)
	}

	// Primal feasibility and complementary slackness of the constraints.
	dualScale := 1.0
	for _, rw := range rows {
		dualScale = math.Max(dualScale, rw.a+rw.c)
	}
	for _, mu := range sol.ConstraintDual {
		dualScale = math.Max(dualScale, math.Abs(mu))
	}
	for j := 0; j < m; j++ {
		s, scale := slack(j)
		mu := sol.ConstraintDual[j]
		lim := tol * (1 + scale)
		if s < -lim {
			bad("constraint %d violated: g'b - h = %g", j, s)
		}
		if mu < -tol*dualScale {
			bad("constraint dual %d = %g < 0", j, mu)
		}
		if s > lim && math.Abs(mu) > tol*dualScale {
			bad("constraint %d slack %g but dual %g (complementary slackness)", j, s, mu)
		}
	}

	// Dual feasibility: box and residual signs.
	for k, rw := range rows {
		d := duals[k]
		res, scale := residual(k)
		lim := tol * (1 + rw.a + rw.c)
		what := fmt.Sprintf("data row %d", k)
		if k >= n {
			what = fmt.Sprintf("penalty row %d", k-n)
		}
		if d > rw.a+lim || d < -rw.c-lim {
			bad("%s: dual %g outside [%g, %g]", what, d, -rw.c, rw.a)
		}
		clear := tol * (1 + scale)
		if res > clear && math.Abs(d-rw.a) > lim {
			bad("%s: residual %g > 0 but dual %g != %g", what, res, d, rw.a)
		}
		if res < -clear && math.Abs(d+rw.c) > lim {
			bad("%s: residual %g < 0 but dual %g != %g", what, res, d, -rw.c)
		}
	}

	// Stationarity: X'd + D'd_pen + G'mu = 0.
	sum := make([]float64, q)
	abs := make([]float64, q)
	for k, rw := range rows {
		f, v := rw.d.Row(rw.i)
		for l, x := range v {
			sum[f+l] += x * duals[k]
			abs[f+l] += math.Abs(x * duals[k])
		}
	}
	for j, g := range p.G {
		for k, x := range g {
			sum[k] += x * sol.ConstraintDual[j]
			abs[k] += math.Abs(x * sol.ConstraintDual[j])
		}
	}
	for k := range sum {
		if math.Abs(sum[k]) > tol*(1+abs[k]) {
			bad("stationarity: component %d of X'd + D'd + G'mu = %g (scale %g)", k, sum[k], abs[k])
		}
	}

	// Primal-dual gap: objective = y'd + h'mu (penalty rows have y = 0).
	dual, dabs := 0.0, 0.0
	for k := 0; k < n; k++ {
		dual += p.Y[k] * duals[k]
		dabs += math.Abs(p.Y[k] * duals[k])
	}
	for j, mu := range sol.ConstraintDual {
		dual += p.H[j] * mu
		dabs += math.Abs(p.H[j] * mu)
	}
	if math.Abs(obj-dual) > tol*(1+obj+dabs) {
		bad("primal-dual gap: primal %.15g, dual y'd + h'mu = %.15g", obj, dual)
	}

	// Vertex: Basis names q distinct conditions that hold with equality and
	// whose rows are linearly independent.
	if len(sol.Basis) != q {
		bad("basis has %d conditions, want %d", len(sol.Basis), q)
		return errs
	}
	seen := make(map[int]bool, q)
	a := mat.NewDense(q, q, nil)
	for l, k := range sol.Basis {
		if k < 0 || k >= n+r+m || seen[k] {
			bad("basis entry %d = %d out of range or repeated", l, k)
			return errs
		}
		seen[k] = true
		if k < n+r {
			res, scale := residual(k)
			if math.Abs(res) > tol*(1+scale) {
				bad("basis row %d has residual %g", k, res)
			}
			f, v := rows[k].d.Row(rows[k].i)
			for c, x := range v {
				a.Set(l, f+c, x)
			}
		} else {
			s, scale := slack(k - n - r)
			if math.Abs(s) > tol*(1+scale) {
				bad("basis constraint %d has slack %g", k-n-r, s)
			}
			a.SetRow(l, p.G[k-n-r])
		}
	}
	var lu mat.LU
	lu.Factorize(a)
	if c := lu.Cond(); !(c < certMaxCond) {
		bad("basis rows are singular (condition number %g)", c)
	}
	return errs
}

// testObjective returns the objective of p at b.
func testObjective(p *Problem, b []float64) float64 {
	obj := 0.0
	for i := range p.Y {
		w := 1.0
		if p.W != nil {
			w = p.W[i]
		}
		u := p.Y[i] - p.X.Dot(i, b)
		if u > 0 {
			obj += p.Tau * w * u
		} else {
			obj -= (1 - p.Tau) * w * u
		}
	}
	if p.Penalty != nil {
		for j := 0; j < p.Penalty.Rows(); j++ {
			obj += p.Lambda * math.Abs(p.Penalty.Dot(j, b))
		}
	}
	return obj
}

// relClose reports |a-b| <= tol*max(1, |a|, |b|).
func testRelClose(a, b, tol float64) bool {
	return math.Abs(a-b) <= tol*math.Max(1, math.Max(math.Abs(a), math.Abs(b)))
}

// TestCertificateAcceptsHandSolved checks the helper on problems solved by
// hand: the median of {1, 2, 4} is 2 with duals (-1/2, 0, 1/2) and objective
// 3/2; with the constraint b >= 3 the optimum moves to b = 3, objective 2,
// duals (-1/2, -1/2, 1/2) and mu = 1/2 (exact arithmetic).
func TestCertificateAcceptsHandSolved(t *testing.T) {
	x := NewDense([][]float64{{1}, {1}, {1}})
	p := &Problem{Y: []float64{1, 2, 4}, X: x, Tau: 0.5}
	sol := &Solution{Coef: []float64{2}, Objective: 1.5, Basis: []int{1},
		Zero: []int{1}, ZeroDual: []float64{0}, ConstraintDual: []float64{}}
	if errs := certificateErrors(p, sol, 1e-12); len(errs) > 0 {
		t.Errorf("unconstrained median rejected: %v", errs)
	}
	pc := &Problem{Y: []float64{1, 2, 4}, X: x, Tau: 0.5, G: [][]float64{{1}}, H: []float64{3}}
	solc := &Solution{Coef: []float64{3}, Objective: 2, Basis: []int{3},
		ConstraintDual: []float64{0.5}}
	if errs := certificateErrors(pc, solc, 1e-12); len(errs) > 0 {
		t.Errorf("constrained median rejected: %v", errs)
	}
	// The unconstrained median violates the constraint; the constrained
	// answer without mu is not stationary.
	wrong := *solc
	wrong.Coef, wrong.Objective, wrong.Basis = []float64{2}, 1.5, []int{1}
	wrong.Zero, wrong.ZeroDual = []int{1}, []float64{0}
	wrong.ConstraintDual = []float64{0}
	if errs := certificateErrors(pc, &wrong, 1e-12); len(errs) == 0 {
		t.Error("infeasible point accepted")
	}
}

// TestCertificateOnGonumOptimum checks the helper against optima found by
// gonum v0.17.0 lp.Simplex on seeded random problems (duals recovered from
// the active rows), then checks that each kind of corruption is rejected.
func TestCertificateOnGonumOptimum(t *testing.T) {
	rng := rand.New(rand.NewPCG(7, 1))
	checked := 0
	for trial := 0; trial < 100 && checked < 30; trial++ {
		tp := testRandomProblem(rng, 40, 6, false)
		b, obj, err := gonumSolve(tp.p)
		if err != nil {
			continue
		}
		sol := testRecoverDual(tp.p, b, obj)
		if sol == nil {
			continue // degenerate vertex: duals not determined by the active rows
		}
		checked++
		if errs := certificateErrors(tp.p, sol, 1e-8); len(errs) > 0 {
			t.Fatalf("trial %d: gonum optimum rejected: %v", trial, errs)
		}
		corrupt := map[string]func(s *Solution){
			"objective": func(s *Solution) { s.Objective += 1e-4 * (1 + s.Objective) },
			"coef":      func(s *Solution) { s.Coef[0] += 1e-3 * (1 + math.Abs(s.Coef[0])) },
			"basis":     func(s *Solution) { s.Basis = s.Basis[1:] },
		}
		if len(sol.ZeroDual) > 0 {
			corrupt["dual"] = func(s *Solution) { s.ZeroDual[0] += 1e-3 }
			corrupt["scaled"] = func(s *Solution) { testScale(0.9, s.ZeroDual) }
		}
		if len(sol.ConstraintDual) > 0 {
			corrupt["mu"] = func(s *Solution) { s.ConstraintDual[0] -= 1 + s.ConstraintDual[0] }
		}
		for name, f := range corrupt {
			c := cloneSolution(sol)
			f(c)
			if errs := certificateErrors(tp.p, c, 1e-8); len(errs) == 0 {
				t.Errorf("trial %d: corrupted %s accepted", trial, name)
			}
		}
	}
	if checked < 20 {
		t.Fatalf("only %d nondegenerate gonum optima to check against", checked)
	}
}

func testScale(c float64, v []float64) {
	for i := range v {
		v[i] *= c
	}
}

func cloneSolution(s *Solution) *Solution {
	c := *s
	c.Coef = append([]float64(nil), s.Coef...)
	c.Zero = append([]int(nil), s.Zero...)
	c.ZeroDual = append([]float64(nil), s.ZeroDual...)
	c.ConstraintDual = append([]float64(nil), s.ConstraintDual...)
	c.Basis = append([]int(nil), s.Basis...)
	return &c
}

// testRecoverDual builds a Solution from an optimal b of p found elsewhere:
// rows with a zero residual (and active constraints) must number exactly the
// coefficient count; their multipliers solve the stationarity system given the
// others at their bounds. It returns nil when the vertex is degenerate or the
// recovered multipliers leave their box.
func testRecoverDual(p *Problem, b []float64, obj float64) *Solution {
	const zero = 1e-9 // residual counted as zero, relative (common practice)
	n, q := p.X.Rows(), p.X.Cols
	r := 0
	if p.Penalty != nil {
		r = p.Penalty.Rows()
	}
	sol := &Solution{Coef: b, Objective: obj, ConstraintDual: make([]float64, len(p.G))}
	rhs := make([]float64, q)
	type act struct {
		k   int
		row []float64
	}
	var active []act
	addRow := func(k int, d *Design, i int, y, a, c float64) {
		f, v := d.Row(i)
		res := y - d.Dot(i, b)
		if math.Abs(res) <= zero*(1+math.Abs(y)) {
			row := make([]float64, q)
			copy(row[f:], v)
			active = append(active, act{k, row})
			return
		}
		dk := a
		if res < 0 {
			dk = -c
		}
		for l, x := range v {
			rhs[f+l] -= x * dk
		}
	}
	for i := 0; i < n; i++ {
		w := 1.0
		if p.W != nil {
			w = p.W[i]
		}
		addRow(i, p.X, i, p.Y[i], p.Tau*w, (1-p.Tau)*w)
	}
	for j := 0; j < r; j++ {
		addRow(n+j, p.Penalty, j, 0, p.Lambda, p.Lambda)
	}
	for j, g := range p.G {
		s := -p.H[j]
		for k, x := range g {
			s += x * b[k]
		}
		if math.Abs(s) <= zero*(1+math.Abs(p.H[j])) {
			active = append(active, act{n + r + j, g})
		}
	}
	if len(active) != q {
		return nil
	}
	at := mat.NewDense(q, q, nil)
	for l, a := range active {
		at.SetCol(l, a.row)
		sol.Basis = append(sol.Basis, a.k)
	}
	var z mat.VecDense
	if err := z.SolveVec(at, mat.NewVecDense(q, rhs)); err != nil {
		return nil
	}
	for l, a := range active {
		v := z.AtVec(l)
		if a.k < n+r {
			sol.Zero = append(sol.Zero, a.k)
			sol.ZeroDual = append(sol.ZeroDual, v)
		} else {
			if v < 0 {
				return nil
			}
			sol.ConstraintDual[a.k-n-r] = v
		}
	}
	// Leave the box check to certificateErrors; the problems are nondegenerate
	// with probability one, so a violation would be a real error in gonum's
	// answer or in the helper.
	return sol
}

// testUnique reports whether sol proves its coefficients are the unique
// optimum: every basis row has its multiplier strictly inside its box and
// every basis constraint a positive multiplier. Complementary slackness holds
// between any primal and any dual optimum, so every optimum then satisfies
// the p independent basis conditions with equality (exact identity).
func testUnique(p *Problem, sol *Solution) bool {
	const margin = 1e-7 // relative distance from the box ends (common practice)
	n := p.X.Rows()
	r := 0
	if p.Penalty != nil {
		r = p.Penalty.Rows()
	}
	for _, k := range sol.Basis {
		switch {
		case k < n:
			w := 1.0
			if p.W != nil {
				w = p.W[k]
			}
			a, c := p.Tau*w, (1-p.Tau)*w
			if d := testZeroDual(sol, k); math.IsNaN(d) || d >= a-margin*(a+c) || d <= -c+margin*(a+c) {
				return false
			}
		case k < n+r:
			if d := testZeroDual(sol, k); math.IsNaN(d) || math.Abs(d) >= p.Lambda*(1-margin) {
				return false
			}
		default:
			if sol.ConstraintDual[k-n-r] <= margin {
				return false
			}
		}
	}
	return true
}

// testZeroDual returns the multiplier listed for soft row k, which must be
// among sol.Zero (basis rows always are).
func testZeroDual(sol *Solution, k int) float64 {
	for j, i := range sol.Zero {
		if i == k {
			return sol.ZeroDual[j]
		}
	}
	return math.NaN()
}
