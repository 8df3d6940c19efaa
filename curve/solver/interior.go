package solver

import (
	"fmt"
	"math"

	"gonum.org/v1/gonum/mat"
)

// Tolerances of the interior-point method. Its answer is only a guide to the
// optimal vertex (see crossover.go), so they need not be tight.
const (
	// gapTol: stop when the duality gap is below gapTol*(1+|objective|).
	gapTol = 1e-10
	// feasTol: stop only when primal and dual residuals are below feasTol
	// times the problem's scales.
	feasTol = 1e-9
	// boundaryStep: fraction of the step to the boundary of the positive
	// orthant that an iteration takes.
	boundaryStep = 0.99995
	// ridge: relative diagonal shift added when the normal matrix is not
	// numerically positive definite.
	ridge = 1e-13
	// ridgeTries: shifts tried, each 100 times the last, before the normal
	// matrix is declared singular.
	ridgeTries = 6
)

// Kinds of rows in the interior-point method.
const (
	rowFree  = iota // soft row with positive cost: variables u, v, zu, zv, d
	rowFixed        // soft row whose multiplier d is a constant (zero cost, or pooled)
	rowHard         // constraint: variables s (slack) and d (its multiplier mu)
)

// interior solves the table's LP by a primal–dual interior-point method with
// Mehrotra's predictor–corrector and returns its approximate solution b.
//
// The primal is
//
//	minimise a'u + c'v  subject to  X b + u - v = y,  G b - s = h,  u, v, s >= 0
//
// and its dual is the bounded problem of Koenker & Ng: maximise y'd + h'mu
// subject to X'd + G'mu = 0, -c <= d <= a, mu >= 0. Every Newton step
// eliminates all but the p coefficient directions, leaving the normal
// equations (X'Θ X + G'Σ G) Δb = rhs. Rows are banded, so the matrix is
// accumulated in O(n·w²) for rows of w stored entries and factored by a
// p-by-p Cholesky decomposition. The predictor and the corrector share Θ, so
// each iteration accumulates and factors the matrix once; the work per
// iteration is four passes over the rows.
//
// Pooled rows (preprocess.go) keep the sign of their residual by
// construction, so their multiplier is fixed at its bound and they enter only
// as a constant term of X'd: the method then never sees their large
// residuals, which would otherwise swamp its scaling. Rows of zero cost are
// fixed at d = 0 the same way.
//
// References:
//   - Portnoy, S. & Koenker, R. (1997). The Gaussian hare and the Laplacian
//     tortoise: computability of squared-error versus absolute-error
//     estimators. Statistical Science 12, 279–300.
//   - Mehrotra, S. (1992). On the implementation of a primal–dual interior
//     point method. SIAM J. Optimization 2, 575–601.
//   - Koenker, R. & Ng, P. (2005). Inequality constrained quantile
//     regression. Sankhyā 67, 418–440.
func interior(t *table, maxIter int) (b []float64, iters int, err error) {
	if maxIter <= 0 {
		maxIter = 200
	}
	s := newIPM(t)
	if err := s.start(); err != nil {
		return nil, 0, err
	}
	ap, ad := 0.0, 0.0 // step of the previous iteration (none yet)
	for iters = 0; iters < maxIter; iters++ {
		if s.state(ap, ad) {
			return s.b, iters, nil
		}
		if err := s.factor(); err != nil {
			return nil, iters, err
		}
		// Predictor: the affine-scaling direction.
		s.solve()
		var aff float64
		ap, ad, aff = s.predict()
		comp := s.comp
		sigma := math.Pow(math.Max(aff, 0)/comp, 3)
		// Corrector: centring plus the second-order term of the predictor.
		s.target = sigma * comp / float64(max(s.nc, 1))
		s.correct()
		s.solve()
		ap, ad = s.steps()
		ap = math.Min(1, boundaryStep*ap)
		ad = math.Min(1, boundaryStep*ad)
		for k := range s.b {
			s.b[k] += ap * s.db[k]
		}
	}
	// Not converged to the tolerances: the crossover still finds the vertex
	// and the simplex method finishes from there, so the point is usable.
	return s.b, iters, nil
}

// ipm is the state of the interior-point method. Per row i: r residual;
// for free soft rows u, v and their multipliers zu, zv, the dual d, the dual
// residuals ra, rc; for hard rows the slack in u and the multiplier in d.
// om and q are the Newton weights and right-hand sides, pu and pv the
// predictor's complementarity products, dd the last direction of d.
type ipm struct {
	t                 *table
	n, ns, p, nc      int
	ys, cs            float64
	kind              []uint8
	r, u, v, zu, zv   []float64
	d, ra, rc, om, q  []float64
	izu, izv          []float64 // 1/zu, 1/zv (1/d for hard rows)
	pu, pv, dd        []float64
	b, db, rb, rhs    []float64
	m                 *mat.SymDense
	chol              mat.Cholesky
	comp, target      float64
	factorised, first bool
}

func newIPM(t *table) *ipm {
	n, ns, p := t.rows(), t.nSoft, t.p()
	ys, cs := t.scales()
	s := &ipm{t: t, n: n, ns: ns, p: p, ys: ys, cs: cs, kind: make([]uint8, n), m: mat.NewSymDense(p, nil)}
	for _, a := range []*[]float64{&s.r, &s.u, &s.v, &s.zu, &s.zv, &s.d, &s.ra, &s.rc, &s.om, &s.q, &s.pu, &s.pv, &s.dd, &s.izu, &s.izv} {
		*a = make([]float64, n)
	}
	for _, a := range []*[]float64{&s.b, &s.db, &s.rb, &s.rhs} {
		*a = make([]float64, p)
	}
	nx := len(t.x.First)
	for i := range s.kind {
		switch {
		case i >= ns:
			s.kind[i] = rowHard
			s.nc++
		case i >= nx:
			// A pooled row: its residual keeps the sign it was pooled with.
			s.kind[i] = rowFixed
			s.d[i] = t.a[i]
			if t.poolSign[i-nx] < 0 {
				s.d[i] = -t.c[i]
			}
		case t.a[i]+t.c[i] > 0:
			s.kind[i] = rowFree
			s.nc += 2
		default:
			s.kind[i] = rowFixed
		}
	}
	return s
}

// start sets the starting point around the least-squares fit weighted by
// the row costs.
func (s *ipm) start() error {
	t := s.t
	for i := 0; i < s.n; i++ {
		if s.kind[i] == rowFree {
			s.om[i] = t.a[i] + t.c[i]
			s.q[i] = t.y[i]
		}
	}
	s.accumulate(true)
	if err := s.factor(); err != nil {
		return err
	}
	clear(s.rb)
	s.solve()
	copy(s.b, s.db)
	t.residuals(s.r, s.b)
	meanAbs, dualScale, nFree := 0.0, 0.0, 0
	for i := 0; i < s.ns; i++ {
		if s.kind[i] == rowFree {
			meanAbs += math.Abs(s.r[i])
			dualScale += t.a[i] + t.c[i]
			nFree++
		}
	}
	meanAbs /= float64(max(nFree, 1))
	dualScale = math.Max(dualScale/float64(max(nFree, 1)), 1e-300)
	shift := math.Max(meanAbs, 1e-3*s.ys)
	for i := 0; i < s.n; i++ {
		r := s.r[i]
		switch s.kind[i] {
		case rowFree:
			s.u[i] = math.Max(r, 0) + shift
			s.v[i] = math.Max(-r, 0) + shift
			s.d[i] = (t.a[i] - t.c[i]) / 2
			s.zu[i] = t.a[i] - s.d[i]
			s.zv[i] = t.c[i] + s.d[i]
		case rowHard:
			s.u[i] = math.Max(-r, 0) + shift
			s.d[i] = dualScale
		}
	}
	s.first = true
	return nil
}

// accumulate adds sum_i om_i x_i x_i' (when matrix is set) and sum_i
// x_i om_i q_i into the normal equations.
func (s *ipm) accumulate(matrix bool) {
	raw := s.m.RawSymmetric()
	if matrix {
		clear(raw.Data)
		s.factorised = false
	}
	clear(s.rhs)
	for _, pt := range s.t.parts() {
		w := pt.d.Width
		for k, f := range pt.d.First {
			i := pt.off + k
			o := s.om[i]
			if o == 0 {
				continue
			}
			x := pt.d.Val[k*w : k*w+w]
			oq := o * s.q[i]
			rhs := s.rhs[f : f+w]
			for k1, x1 := range x {
				rhs[k1] += x1 * oq
			}
			if !matrix {
				continue
			}
			for k1, x1 := range x {
				if x1 == 0 {
					continue
				}
				ox := o * x1
				row := raw.Data[(f+k1)*raw.Stride+f : (f+k1)*raw.Stride+f+w]
				for k2 := k1; k2 < w; k2++ {
					row[k2] += ox * x[k2]
				}
			}
		}
	}
}

// factor factors the normal matrix, shifting its diagonal when it is not
// numerically positive definite.
func (s *ipm) factor() error {
	p := s.p
	raw := s.m.RawSymmetric()
	trace := 0.0
	for k := 0; k < p; k++ {
		trace += raw.Data[k*raw.Stride+k]
	}
	if math.IsNaN(trace) || math.IsInf(trace, 0) {
		return fmt.Errorf("%w: interior point diverged", ErrNoConverge)
	}
	shift := 0.0
	for try := 0; !s.chol.Factorize(s.m); try++ {
		if try == ridgeTries {
			return fmt.Errorf("%w: normal equations are singular", ErrRankDeficient)
		}
		step := ridge * math.Max(trace, 1) * math.Pow(100, float64(try))
		for k := 0; k < p; k++ {
			raw.Data[k*raw.Stride+k] += step - shift
		}
		shift = step
	}
	return nil
}

// solve sets db to the solution of the factored normal equations with
// right-hand side rhs - rb.
func (s *ipm) solve() {
	for k := range s.rhs {
		s.rhs[k] -= s.rb[k]
	}
	out := mat.NewVecDense(s.p, s.db)
	// Late iterations are ill-conditioned by design (Θ spreads over many
	// orders of magnitude); gonum's condition warning is expected then, and
	// the crossover does not need an accurate step.
	_ = s.chol.SolveVecTo(out, mat.NewVecDense(s.p, s.rhs))
}

// state takes the previous iteration's step (lengths ap, ad along the
// directions left in db and dd), computes residuals, reports convergence,
// and otherwise sets up the predictor's Newton system.
func (s *ipm) state(ap, ad float64) (converged bool) {
	t := s.t
	if !s.first {
		s.update(ap, ad)
	}
	s.first = false
	clear(s.rb)
	primal, dual := 0.0, 0.0
	pinf, dinf, comp := 0.0, 0.0, 0.0
	for _, pt := range t.parts() {
		w := pt.d.Width
		for k, f := range pt.d.First {
			i := pt.off + k
			x := pt.d.Val[k*w : k*w+w]
			bb := s.b[f : f+w]
			xb := 0.0
			for m, xm := range x {
				xb += xm * bb[m]
			}
			r := t.y[i] - xb
			s.r[i] = r
			di := s.d[i]
			if di != 0 {
				rb := s.rb[f : f+w]
				for m, xm := range x {
					rb[m] -= di * xm
				}
				dual += t.y[i] * di
			}
			switch s.kind[i] {
			case rowFree:
				u, v, zu, zv := s.u[i], s.v[i], s.zu[i], s.zv[i]
				primal += t.a[i]*u + t.c[i]*v
				pinf = max(pinf, math.Abs(r-u+v))
				ra := t.a[i] - di - zu
				rc := t.c[i] + di - zv
				s.ra[i], s.rc[i] = ra, rc
				dinf = max(dinf, math.Abs(ra), math.Abs(rc))
				comp += u*zu + v*zv
				izu, izv := 1/zu, 1/zv
				s.izu[i], s.izv[i] = izu, izv
				s.om[i] = 1 / (u*izu + v*izv)
				s.q[i] = r - u*ra*izu + v*rc*izv
			case rowFixed:
				primal += di * r
				s.om[i] = 0
			case rowHard:
				sl := s.u[i]
				pinf = max(pinf, math.Abs(r+sl))
				comp += sl * di
				s.izu[i] = 1 / di
				s.om[i] = di / sl
				s.q[i] = r
			}
		}
	}
	for _, x := range s.rb {
		dinf = max(dinf, math.Abs(x))
	}
	s.comp = comp
	if math.Abs(primal-dual) <= gapTol*(1+math.Abs(primal)) && pinf <= feasTol*s.ys && dinf <= feasTol*s.cs*(1+float64(s.p)) {
		return true
	}
	s.accumulate(true)
	return false
}

// directions sets dd_i = om_i (q_i - x_i'db) for every row.
func (s *ipm) directions() {
	for _, pt := range s.t.parts() {
		w := pt.d.Width
		for k, f := range pt.d.First {
			i := pt.off + k
			if s.om[i] == 0 {
				s.dd[i] = 0
				continue
			}
			x := pt.d.Val[k*w : k*w+w]
			db := s.db[f : f+w]
			xdb := 0.0
			for m, xm := range x {
				xdb += xm * db[m]
			}
			s.dd[i] = s.om[i] * (s.q[i] - xdb)
		}
	}
}

// dirFree returns the steps of u, v, zu, zv of free row i given dd_i, for
// which the linearised products (u+du)(zu+dzu) and (v+dv)(zv+dzv) equal tu
// and tv.
func (s *ipm) dirFree(i int, dd, tu, tv float64) (du, dv, dzu, dzv float64) {
	u, v := s.u[i], s.v[i]
	du = (tu+u*(s.ra[i]+dd))*s.izu[i] - u
	dv = (tv+v*(s.rc[i]-dd))*s.izv[i] - v
	return du, dv, -s.ra[i] - dd, dd - s.rc[i]
}

// dirHard returns the step of the slack of hard row i given dd_i, for which
// the linearised product of slack and multiplier equals ts.
func (s *ipm) dirHard(i int, dd, ts float64) float64 {
	return (ts-s.u[i]*dd)*s.izu[i] - s.u[i]
}

// limit returns the largest a' <= a with x + a'dx >= 0 (x >= 0), dividing
// only when the limit shrinks.
func limit(a, x, dx float64) float64 {
	if dx < 0 && x < -a*dx {
		return -x / dx
	}
	return a
}

// predict computes the affine-scaling direction in db, its step lengths,
// the complementarity it would reach, and stores its products for the
// corrector.
func (s *ipm) predict() (ap, ad, aff float64) {
	s.target = 0
	s.directions()
	ap, ad = 1, 1
	var s1, s2, s3 float64 // sums of dx*z, x*dz, dx*dz
	for i := 0; i < s.n; i++ {
		dd := s.dd[i]
		switch s.kind[i] {
		case rowFree:
			du, dv, dzu, dzv := s.dirFree(i, dd, 0, 0)
			ap = limit(limit(ap, s.u[i], du), s.v[i], dv)
			ad = limit(limit(ad, s.zu[i], dzu), s.zv[i], dzv)
			s1 += du*s.zu[i] + dv*s.zv[i]
			s2 += s.u[i]*dzu + s.v[i]*dzv
			pu, pv := du*dzu, dv*dzv
			s3 += pu + pv
			s.pu[i], s.pv[i] = pu, pv
		case rowHard:
			ds := s.dirHard(i, dd, 0)
			ap = limit(ap, s.u[i], ds)
			ad = limit(ad, s.d[i], dd)
			s1 += ds * s.d[i]
			s2 += s.u[i] * dd
			s3 += ds * dd
			s.pu[i] = ds * dd
		}
	}
	aff = s.comp + ap*s1 + ad*s2 + ap*ad*s3
	return ap, ad, aff
}

// correct sets up the corrector's right-hand side for target s.target,
// reusing the predictor's factor.
func (s *ipm) correct() {
	tg := s.target
	for i := 0; i < s.n; i++ {
		switch s.kind[i] {
		case rowFree:
			s.q[i] += (s.pu[i]-tg)*s.izu[i] - (s.pv[i]-tg)*s.izv[i]
		case rowHard:
			s.q[i] += (tg - s.pu[i]) * s.izu[i]
		}
	}
	s.accumulate(false)
}

// steps computes the corrector's directions and returns the longest steps
// that keep the variables non-negative.
func (s *ipm) steps() (ap, ad float64) {
	s.directions()
	tg := s.target
	ap, ad = 1, 1
	for i := 0; i < s.n; i++ {
		dd := s.dd[i]
		switch s.kind[i] {
		case rowFree:
			du, dv, dzu, dzv := s.dirFree(i, dd, tg-s.pu[i], tg-s.pv[i])
			ap = limit(limit(ap, s.u[i], du), s.v[i], dv)
			ad = limit(limit(ad, s.zu[i], dzu), s.zv[i], dzv)
		case rowHard:
			ap = limit(ap, s.u[i], s.dirHard(i, dd, tg-s.pu[i]))
			ad = limit(ad, s.d[i], dd)
		}
	}
	return ap, ad
}

// update moves the row variables along the corrector's directions.
func (s *ipm) update(ap, ad float64) {
	tg := s.target
	for i := 0; i < s.n; i++ {
		dd := s.dd[i]
		switch s.kind[i] {
		case rowFree:
			du, dv, dzu, dzv := s.dirFree(i, dd, tg-s.pu[i], tg-s.pv[i])
			s.u[i] += ap * du
			s.v[i] += ap * dv
			s.zu[i] += ad * dzu
			s.zv[i] += ad * dzv
			s.d[i] += ad * dd
		case rowHard:
			s.u[i] += ap * s.dirHard(i, dd, tg-s.pu[i])
			s.d[i] += ad * dd
		}
	}
}
