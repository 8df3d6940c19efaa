package solver

import (
	"fmt"
	"math"
)

// Tolerances of the optimality check of an answer on the full problem.
const (
	// certDual: a multiplier may leave its range [-c_i, a_i], or differ
	// from the end its residual's sign fixes, by certDual*(a_i+c_i). The
	// simplex method accepts a vertex when no edge descends faster than
	// optimalSlope times the largest cost, so its multipliers sit in their
	// ranges to about that, times the basis's growth of rounding;
	// certDual leaves three orders of magnitude of margin.
	certDual = 1e-8
	// certStation: every component of X'd + D'd + G'mu must be within
	// certStation times the sum of the absolute values of its terms (plus
	// one; for pooled rows an upper bound of that sum, at most
	// max(tau, 1-tau)/min(tau, 1-tau) times it, see rowScale.mass). A straight sum of n terms is off by at most n*eps of that sum
	// (Higham 2002, ch. 4): 2.2e-9 at n = 10^7 in the worst case, about
	// sqrt(n)*eps in practice; an answer of a wrongly reduced problem
	// misses by a sizeable fraction of it (about 0.8 in the case that made
	// this check, see TestRegressionsGrid).
	certStation = 1e-8
	// certGap: the primal-dual gap sum rho(r_i) - (y'd + h'mu) must be
	// within certGap times the sum of the absolute values of its terms
	// (plus one); the same summation bound as certStation.
	certGap = 1e-8
)

// certifier checks the optimality conditions of a candidate answer b of the
// full problem (a table's soft and hard rows), row by row as a pass over the
// data meets them:
//
//   - dual feasibility: every soft row's multiplier d_i lies in [-c_i, a_i],
//     and equals a_i where r_i > 0 and -c_i where r_i < 0 (beyond the zero
//     tolerance of residuals);
//   - primal feasibility of the constraints: g_j'b >= h_j, with mu_j >= 0
//     and mu_j = 0 where the constraint is slack (complementary slackness);
//   - stationarity: X'd + D'd_pen + G'mu = 0;
//   - zero primal-dual gap: sum_i rho_i(r_i) = y'd + h'mu.
//
// Together these are the Karush–Kuhn–Tucker conditions of the linear
// programme, which prove b optimal whatever produced it (the dual LP is the
// bounded one of Koenker & Ng 2005; see interior).
type certifier struct {
	tol       float64   // |r| below tol counts as zero
	st, stAbs []float64 // X'd + D'd + G'mu and the sum of its terms' sizes
	dual      float64   // y'd + h'mu
	dualAbs   float64
	primal    float64 // objective, filled in by the caller
	wrong     int     // multipliers that contradict their rows
	first     string  // the first contradiction, for the error
	// slack and multiplier of each constraint, checked in err
	hardSlack, hardMu []float64
}

func newCertifier(p int, tol float64) *certifier {
	return &certifier{tol: tol, st: make([]float64, p), stAbs: make([]float64, p)}
}

// fail records a contradiction.
func (c *certifier) fail(format string, args ...any) {
	if c.wrong == 0 {
		c.first = fmt.Sprintf(format, args...)
	}
	c.wrong++
}

// soft checks soft row i (response y, residual r, multiplier d, costs a
// and c, entries x from column f) and adds its terms.
func (c *certifier) soft(i int, y, r, d, a, cost float64, f int, x []float64) {
	lim := certDual * (a + cost)
	switch {
	case d > a+lim || d < -cost-lim:
		c.fail("row %d: multiplier %g outside [%g, %g]", i, d, -cost, a)
	case r > c.tol && math.Abs(d-a) > lim:
		c.fail("row %d: residual %g > 0 but multiplier %g, not %g", i, r, d, a)
	case r < -c.tol && math.Abs(d+cost) > lim:
		c.fail("row %d: residual %g < 0 but multiplier %g, not %g", i, r, d, -cost)
	}
	c.add(y, d, f, x)
}

// add adds d times the row (y; x from column f) to the dual sums.
func (c *certifier) add(y, d float64, f int, x []float64) {
	st, sa := c.st[f:f+len(x)], c.stAbs[f:f+len(x)]
	for k, v := range x {
		st[k] += d * v
		sa[k] += math.Abs(d * v)
	}
	c.dual += y * d
	c.dualAbs += math.Abs(y * d)
}

// hard checks constraint j (g'b >= h, slack s = g'b - h, multiplier mu,
// row g) and adds its terms. The multiplier's sign is checked in err, when
// the size of the dual sums is known.
func (c *certifier) hard(j int, h, s, mu float64, g []float64) {
	if s < -c.tol {
		c.fail("constraint %d violated by %g", j, -s)
	}
	c.hardSlack = append(c.hardSlack, s)
	c.hardMu = append(c.hardMu, mu)
	c.add(h, mu, 0, g)
}

// err returns nil when every condition holds, else an error wrapping
// ErrUnverified that names the first that fails.
func (c *certifier) err() error {
	// A constraint multiplier balances terms of X'd, so the largest sum
	// of their sizes is its scale.
	scale := 1.0
	for _, v := range c.stAbs {
		scale = max(scale, v)
	}
	for j, mu := range c.hardMu {
		switch lim := certDual * scale; {
		case mu < -lim:
			c.fail("constraint %d: multiplier %g < 0", j, mu)
		case c.hardSlack[j] > c.tol && mu > lim:
			c.fail("constraint %d: slack %g but multiplier %g", j, c.hardSlack[j], mu)
		}
	}
	if c.wrong > 0 {
		return fmt.Errorf("%w: %s (%d such rows)", ErrUnverified, c.first, c.wrong)
	}
	for k, v := range c.st {
		if !(math.Abs(v) <= certStation*(1+c.stAbs[k])) {
			return fmt.Errorf("%w: stationarity: component %d of X'd + D'd + G'mu is %g (terms of size %g)",
				ErrUnverified, k, v, c.stAbs[k])
		}
	}
	if !(math.Abs(c.primal-c.dual) <= certGap*(1+math.Abs(c.primal)+c.dualAbs)) {
		return fmt.Errorf("%w: primal-dual gap: objective %.15g, y'd + h'mu %.15g", ErrUnverified, c.primal, c.dual)
	}
	return nil
}

// certifyTable checks the answer b of the whole table t with residuals r
// (every row), multipliers dual of the soft rows and mu of the hard rows.
func certifyTable(t *table, b, r []float64, dual func(i int) float64, mu []float64, obj float64) error {
	ys, _ := t.scales()
	c := newCertifier(t.p(), zeroResidual*ys)
	for i := 0; i < t.nSoft; i++ {
		f, x := t.row(i)
		c.soft(i, t.y[i], r[i], dual(i), t.a[i], t.c[i], f, x)
	}
	for j := range t.rows() - t.nSoft {
		i := t.nSoft + j
		f, x := t.row(i)
		if f != 0 || len(x) != t.p() {
			panic("solver: constraint row not dense")
		}
		c.hard(j, t.y[i], -r[i], mu[j], x)
	}
	c.primal = obj
	return c.err()
}
