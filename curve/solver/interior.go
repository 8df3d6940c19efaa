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
	// guessGapTol replaces gapTol for the subsample fit that only guides
	// the reduction: its sampling error, of relative order 1/sqrt(m) for m
	// rows, dwarfs any gap below this.
	guessGapTol = 1e-5
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
	// pooledMaxIter bounds the iterations on a table with pooled rows. With
	// their multipliers fixed, a band too narrow to hold the answer makes
	// the problem unbounded, which shows as slow convergence; the simplex
	// method then finds the pooled row at its bound and the band widens.
	pooledMaxIter = 50
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
// accumulated in O(n·w²) for rows of w stored entries and has bandwidth
// w-1 (constraints of one coefficient each keep it so), and it is factored
// by a band Cholesky decomposition in O(p·w²) (band.go). The predictor and the corrector share Θ, so
// each iteration accumulates and factors the matrix once; the work per
// iteration is five passes over the rows (taking the last step and the
// residuals, the normal equations, the predictor, the corrector's
// right-hand side, the corrector).
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
func interior(t *table, maxIter int, gap float64) (b []float64, iters int, err error) {
	if maxIter <= 0 {
		maxIter = 200
	}
	if t.nSoft > len(t.x.First) {
		maxIter = min(maxIter, pooledMaxIter)
	}
	s := newIPM(t)
	if err := s.start(); err != nil {
		return nil, 0, err
	}
	ap, ad := 0.0, 0.0 // step of the previous iteration (none yet)
	for iters = 0; iters < maxIter; iters++ {
		if s.state(ap, ad, gap) {
			return s.b, iters, nil
		}
		if err := s.factor(); err != nil {
			return nil, iters, err
		}
		// Predictor: the affine-scaling direction.
		s.solve()
		_, _, aff := s.sweep(true)
		comp := s.comp
		sigma := math.Pow(math.Max(aff, 0)/comp, 3)
		// Corrector: centring plus the second-order term of the predictor.
		s.target = sigma * comp / float64(max(s.nc, 1))
		s.correct()
		s.solve()
		ap, ad, _ = s.sweep(false)
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

// ipm is the state of the interior-point method. Per row i: r the residual
// at the starting fit; for free soft rows u, v and their multipliers zu, zv, the dual d, the dual
// residuals ra, rc; for hard rows the slack in u and the multiplier in d.
// om and q are the Newton weights and right-hand sides, pu and pv the
// predictor's complementarity products, dd the last direction of d.
type ipm struct {
	t                *table
	n, ns, p, nc     int
	ys, cs           float64
	kind             []uint8
	r, u, v, zu, zv  []float64
	d, ra, rc, om, q []float64
	izu, izv         []float64 // 1/zu, 1/zv (1/d for hard rows)
	pu, pv, dd       []float64
	b, db, rb, rhs   []float64
	m                *mat.SymDense
	chol             bandCholesky
	comp, target     float64
	first            bool
}

func newIPM(t *table) *ipm {
	n, ns, p := t.rows(), t.nSoft, t.p()
	ys, cs := t.scales()
	s := &ipm{t: t, n: n, ns: ns, p: p, ys: ys, cs: cs, kind: make([]uint8, n), m: mat.NewSymDense(p, nil)}
	rowVecs := []*[]float64{&s.r, &s.u, &s.v, &s.zu, &s.zv, &s.d, &s.ra, &s.rc, &s.om, &s.q, &s.pu, &s.pv, &s.dd, &s.izu, &s.izv}
	for k, a := range rowVectors(n, len(rowVecs)) {
		*rowVecs[k] = a
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
	s.accumulate()
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

// accumulate sets the normal matrix sum_i om_i x_i x_i', the right-hand
// side sum_i x_i om_i q_i and the dual residual rb = -sum_i d_i x_i.
func (s *ipm) accumulate() {
	raw := s.m.RawSymmetric()
	clear(raw.Data)
	clear(s.rhs)
	clear(s.rb)
	for n, pt := range s.t.parts() {
		w := pt.d.Width
		if n == 0 && w == 4 {
			// Cubic B-spline rows: the common case, summed in registers.
			s.accumulate4(pt.d)
			continue
		}
		for k, f := range pt.d.First {
			i := pt.off + k
			x := pt.d.Val[k*w : k*w+w]
			if di := s.d[i]; di != 0 {
				rb := s.rb[f : f+w]
				for m, xm := range x {
					rb[m] -= di * xm
				}
			}
			o := s.om[i]
			if o == 0 {
				continue
			}
			oq := o * s.q[i]
			rhs := s.rhs[f : f+w]
			for k1, x1 := range x {
				rhs[k1] += x1 * oq
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

// accumulate4 is accumulate for the banded rows of width 4 in d (the
// first part of the table). Consecutive rows that start at the same column
// are summed in local variables and added to the matrix once per run, which
// spares a chain of loads and stores through memory on every row.
func (s *ipm) accumulate4(d *Design) {
	raw := s.m.RawSymmetric()
	st := raw.Stride
	var m00, m01, m02, m03, m11, m12, m13, m22, m23, m33, r0, r1, r2, r3 float64
	var b0, b1, b2, b3 float64 // sums of d_i x_i
	cur := -1
	flush := func() {
		if cur < 0 {
			return
		}
		a := raw.Data[cur*st+cur:]
		a[0] += m00
		a[1] += m01
		a[2] += m02
		a[3] += m03
		a = raw.Data[(cur+1)*st+cur+1:]
		a[0] += m11
		a[1] += m12
		a[2] += m13
		a = raw.Data[(cur+2)*st+cur+2:]
		a[0] += m22
		a[1] += m23
		raw.Data[(cur+3)*st+cur+3] += m33
		rhs := s.rhs[cur : cur+4]
		rhs[0] += r0
		rhs[1] += r1
		rhs[2] += r2
		rhs[3] += r3
		rb := s.rb[cur : cur+4]
		rb[0] -= b0
		rb[1] -= b1
		rb[2] -= b2
		rb[3] -= b3
		m00, m01, m02, m03, m11, m12, m13, m22, m23, m33, r0, r1, r2, r3 = 0, 0, 0, 0, 0, 0, 0, 0, 0, 0, 0, 0, 0, 0
		b0, b1, b2, b3 = 0, 0, 0, 0
	}
	om, q, dv := s.om[:len(d.First)], s.q[:len(d.First)], s.d[:len(d.First)]
	for i, f := range d.First {
		if f != cur {
			flush()
			cur = f
		}
		x := d.Val[i*4 : i*4+4 : i*4+4]
		x0, x1, x2, x3 := x[0], x[1], x[2], x[3]
		di := dv[i]
		b0 += di * x0
		b1 += di * x1
		b2 += di * x2
		b3 += di * x3
		o := om[i]
		if o == 0 {
			continue
		}
		oq := o * q[i]
		r0 += x0 * oq
		r1 += x1 * oq
		r2 += x2 * oq
		r3 += x3 * oq
		o0, o1, o2 := o*x0, o*x1, o*x2
		m00 += o0 * x0
		m01 += o0 * x1
		m02 += o0 * x2
		m03 += o0 * x3
		m11 += o1 * x1
		m12 += o1 * x2
		m13 += o1 * x3
		m22 += o2 * x2
		m23 += o2 * x3
		m33 += o * x3 * x3
	}
	flush()
}

// factor factors the normal matrix by a band Cholesky decomposition,
// shifting its diagonal when it is not numerically positive definite.
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
	for try := 0; !s.chol.factor(raw.Data, p, raw.Stride); try++ {
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
// right-hand side rhs - rb. Late iterations are ill-conditioned by design
// (Θ spreads over many orders of magnitude); the crossover does not need
// an accurate step.
func (s *ipm) solve() {
	for k := range s.rhs {
		s.rhs[k] -= s.rb[k]
	}
	s.chol.solve(s.db, s.rhs)
}

// state takes the previous iteration's step (lengths ap, ad along the
// directions left in db and dd), computes residuals, sets up the
// predictor's Newton system and reports convergence.
//
// state and sweep are the hot loops: they copy the row vectors to locals,
// which the compiler keeps in registers and bounds-checks once.
func (s *ipm) state(ap, ad, gap float64) (converged bool) {
	t := s.t
	step := !s.first
	s.first = false
	tg := s.target
	n := s.n
	y, ca, cc, kind := t.y[:n], t.a[:n], t.c[:n], s.kind[:n]
	u, v, zu, zv, d := s.u[:n], s.v[:n], s.zu[:n], s.zv[:n], s.d[:n]
	ra, rc, izu, izv := s.ra[:n], s.rc[:n], s.izu[:n], s.izv[:n]
	om, q, pu, pv, dd := s.om[:n], s.q[:n], s.pu[:n], s.pv[:n], s.dd[:n]
	b := s.b
	primal, dual := 0.0, 0.0
	pinf, dinf, comp := 0.0, 0.0, 0.0
	for _, pt := range t.parts() {
		w := pt.d.Width
		// Windows on this part's rows, indexed by k: their lengths match
		// First, which spares a bounds check on every access.
		nr, lo := len(pt.d.First), pt.off
		y, ca, cc, kind := window(y, lo, nr), window(ca, lo, nr), window(cc, lo, nr), window(kind, lo, nr)
		u, v, zu, zv, d := window(u, lo, nr), window(v, lo, nr), window(zu, lo, nr), window(zv, lo, nr), window(d, lo, nr)
		ra, rc, izu, izv := window(ra, lo, nr), window(rc, lo, nr), window(izu, lo, nr), window(izv, lo, nr)
		om, q, pu, pv, dd := window(om, lo, nr), window(q, lo, nr), window(pu, lo, nr), window(pv, lo, nr), window(dd, lo, nr)
		for i, f := range pt.d.First {
			x := pt.d.Val[i*w : i*w+w]
			r := y[i] - rowDot(x, b, f)
			di := d[i]
			switch kind[i] {
			case rowFree:
				ui, vi, zui, zvi := u[i], v[i], zu[i], zv[i]
				if step {
					// Take the previous iteration's step for this row.
					ddi := dd[i]
					du, dv, dzu, dzv := dirFree(ui, vi, ra[i], rc[i], izu[i], izv[i], ddi, tg-pu[i], tg-pv[i])
					ui, vi, zui, zvi, di = ui+ap*du, vi+ap*dv, zui+ad*dzu, zvi+ad*dzv, di+ad*ddi
					u[i], v[i], zu[i], zv[i], d[i] = ui, vi, zui, zvi, di
				}
				dual += y[i] * di
				primal += ca[i]*ui + cc[i]*vi
				pinf = max(pinf, math.Abs(r-ui+vi))
				rai := ca[i] - di - zui
				rci := cc[i] + di - zvi
				ra[i], rc[i] = rai, rci
				dinf = max(dinf, math.Abs(rai), math.Abs(rci))
				comp += ui*zui + vi*zvi
				izui, izvi := 1/zui, 1/zvi
				izu[i], izv[i] = izui, izvi
				om[i] = 1 / (ui*izui + vi*izvi)
				q[i] = r - ui*rai*izui + vi*rci*izvi
			case rowFixed:
				dual += y[i] * di
				primal += di * r
				om[i] = 0
			case rowHard:
				sl := u[i]
				if step {
					ddi := dd[i]
					sl += ap * dirHard(sl, izu[i], ddi, tg-pu[i])
					di += ad * ddi
					u[i], d[i] = sl, di
				}
				dual += y[i] * di
				pinf = max(pinf, math.Abs(r+sl))
				comp += sl * di
				izu[i] = 1 / di
				om[i] = di / sl
				q[i] = r
			}
		}
	}
	// The normal equations are set up before the test for convergence
	// because the same pass yields the dual residual rb.
	s.accumulate()
	for _, x := range s.rb {
		dinf = max(dinf, math.Abs(x))
	}
	s.comp = comp
	return math.Abs(primal-dual) <= gap*(1+math.Abs(primal)) && pinf <= feasTol*s.ys && dinf <= feasTol*s.cs*(1+float64(s.p))
}

// window returns the n elements of a from lo, with length n for the
// compiler's bounds-check elimination.
func window[T any](a []T, lo, n int) []T { return a[lo:][:n] }

// dirFree returns the steps of u, v, zu, zv of a free row given its dd, for
// which the linearised products (u+du)(zu+dzu) and (v+dv)(zv+dzv) equal tu
// and tv (ra, rc are its dual residuals, izu = 1/zu, izv = 1/zv).
func dirFree(u, v, ra, rc, izu, izv, dd, tu, tv float64) (du, dv, dzu, dzv float64) {
	du = (tu+u*(ra+dd))*izu - u
	dv = (tv+v*(rc-dd))*izv - v
	return du, dv, -ra - dd, dd - rc
}

// dirHard returns the step of the slack sl of a hard row given its dd, for
// which the linearised product of slack and multiplier equals ts (id is 1
// over the multiplier).
func dirHard(sl, id, dd, ts float64) float64 {
	return (ts-sl*dd)*id - sl
}

// shrink returns max(k, -dx*ix), the inverse of the largest step a <= 1/k
// with x + a*dx >= 0, given ix = 1/x for x > 0. Steps are kept as inverses
// so that no row tests the sign of dx, which is as likely either way and so
// defeats branch prediction; the comparison is rarely true.
func shrink(k, dx, ix float64) float64 {
	if v := -dx * ix; v > k {
		return v
	}
	return k
}

// sweep computes the direction of every row from db (dd_i = om_i (q_i -
// x_i'db) and the steps it implies) and returns the longest steps that keep
// the variables non-negative. For the predictor it also stores the
// complementarity products for the corrector and returns the
// complementarity the step would reach.
func (s *ipm) sweep(predictor bool) (ap, ad, aff float64) {
	tg := s.target
	if predictor {
		tg = 0
	}
	n := s.n
	kind := s.kind[:n]
	u, v, zu, zv, d := s.u[:n], s.v[:n], s.zu[:n], s.zv[:n], s.d[:n]
	ra, rc, izu, izv := s.ra[:n], s.rc[:n], s.izu[:n], s.izv[:n]
	om, q, pu, pv, dd := s.om[:n], s.q[:n], s.pu[:n], s.pv[:n], s.dd[:n]
	db := s.db
	kp, kd := 1.0, 1.0     // inverses of the steps
	var s1, s2, s3 float64 // sums of dx*z, x*dz, dx*dz
	for _, pt := range s.t.parts() {
		w := pt.d.Width
		// Windows on this part's rows, as in state.
		nr, lo := len(pt.d.First), pt.off
		kind := window(kind, lo, nr)
		u, v, zu, zv, d := window(u, lo, nr), window(v, lo, nr), window(zu, lo, nr), window(zv, lo, nr), window(d, lo, nr)
		ra, rc, izu, izv := window(ra, lo, nr), window(rc, lo, nr), window(izu, lo, nr), window(izv, lo, nr)
		om, q, pu, pv, dd := window(om, lo, nr), window(q, lo, nr), window(pu, lo, nr), window(pv, lo, nr), window(dd, lo, nr)
		for i, f := range pt.d.First {
			if om[i] == 0 {
				dd[i] = 0
				continue
			}
			x := pt.d.Val[i*w : i*w+w]
			ddi := om[i] * (q[i] - rowDot(x, db, f))
			dd[i] = ddi
			switch kind[i] {
			case rowFree:
				tu, tv := 0.0, 0.0
				if !predictor {
					tu, tv = tg-pu[i], tg-pv[i]
				}
				ui, vi, zui, zvi := u[i], v[i], zu[i], zv[i]
				du, dv, dzu, dzv := dirFree(ui, vi, ra[i], rc[i], izu[i], izv[i], ddi, tu, tv)
				kp = shrink(shrink(kp, du, 1/ui), dv, 1/vi)
				kd = shrink(shrink(kd, dzu, izu[i]), dzv, izv[i])
				if predictor {
					s1 += du*zui + dv*zvi
					s2 += ui*dzu + vi*dzv
					pui, pvi := du*dzu, dv*dzv
					s3 += pui + pvi
					pu[i], pv[i] = pui, pvi
				}
			case rowHard:
				ts := 0.0
				if !predictor {
					ts = tg - pu[i]
				}
				ds := dirHard(u[i], izu[i], ddi, ts)
				kp = shrink(kp, ds, 1/u[i])
				kd = shrink(kd, ddi, izu[i])
				if predictor {
					s1 += ds * d[i]
					s2 += u[i] * ddi
					s3 += ds * ddi
					pu[i] = ds * ddi
				}
			}
		}
	}
	ap, ad = 1/kp, 1/kd
	aff = s.comp + ap*s1 + ad*s2 + ap*ad*s3
	return ap, ad, aff
}

// correct sets up the corrector's right-hand side for target s.target,
// reusing the predictor's factor.
func (s *ipm) correct() {
	tg := s.target
	clear(s.rhs)
	for _, pt := range s.t.parts() {
		w := pt.d.Width
		// Windows on this part's rows, as in state.
		nr, lo := len(pt.d.First), pt.off
		kind, q, om := window(s.kind, lo, nr), window(s.q, lo, nr), window(s.om, lo, nr)
		pu, pv, izu, izv := window(s.pu, lo, nr), window(s.pv, lo, nr), window(s.izu, lo, nr), window(s.izv, lo, nr)
		for i, f := range pt.d.First {
			switch kind[i] {
			case rowFree:
				q[i] += (pu[i]-tg)*izu[i] - (pv[i]-tg)*izv[i]
			case rowHard:
				q[i] += (tg - pu[i]) * izu[i]
			default:
				continue
			}
			oq := om[i] * q[i]
			x := pt.d.Val[i*w : i*w+w]
			rhs := s.rhs[f : f+w]
			rhs = rhs[:len(x)]
			for m, xm := range x {
				rhs[m] += xm * oq
			}
		}
	}
}
