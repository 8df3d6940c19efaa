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
// p-by-p Cholesky decomposition.
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
	n, ns, p := t.rows(), t.nSoft, t.p()
	ys, cs := t.scales()
	var (
		b0   = make([]float64, p)
		r    = make([]float64, n)
		u    = make([]float64, ns)
		v    = make([]float64, ns)
		zu   = make([]float64, ns)
		zv   = make([]float64, ns)
		d    = make([]float64, n) // d for soft rows, mu for hard rows
		sl   = make([]float64, n) // slack s for hard rows
		om   = make([]float64, n)
		q    = make([]float64, n)
		db   = make([]float64, p)
		dd   = make([]float64, n)
		du   = make([]float64, ns)
		dv   = make([]float64, ns)
		dzu  = make([]float64, ns)
		dzv  = make([]float64, ns)
		ds   = make([]float64, n)
		ra   = make([]float64, ns)
		rc   = make([]float64, ns)
		rb   = make([]float64, p)
		cu   = make([]float64, ns) // complementarity targets
		cv   = make([]float64, ns)
		csl  = make([]float64, n)
		msym = mat.NewSymDense(p, nil)
		chol mat.Cholesky
	)
	active := func(i int) bool { return i >= ns || t.a[i]+t.c[i] > 0 }

	// Start from the least-squares fit of the banded rows weighted by their
	// costs; pooled rows would dominate it, by design far from their fits.
	nx := len(t.x.First)
	for i := 0; i < nx; i++ {
		om[i] = t.a[i] + t.c[i]
		q[i] = t.y[i]
	}
	if err := normalSolve(t, msym, &chol, om[:nx], q[:nx], nil, b0); err != nil {
		return nil, 0, err
	}
	t.residuals(r, b0)
	meanAbs := 0.0
	for i := 0; i < ns; i++ {
		meanAbs += math.Abs(r[i])
	}
	meanAbs /= float64(max(ns, 1))
	shift := math.Max(meanAbs, 1e-3*ys)
	dualScale := 0.0
	for i := 0; i < ns; i++ {
		dualScale += t.a[i] + t.c[i]
	}
	dualScale = math.Max(dualScale/float64(max(ns, 1)), 1e-300)
	for i := 0; i < n; i++ {
		if i < ns {
			if !active(i) {
				continue
			}
			u[i] = math.Max(r[i], 0) + shift
			v[i] = math.Max(-r[i], 0) + shift
			d[i] = (t.a[i] - t.c[i]) / 2
			zu[i] = t.a[i] - d[i]
			zv[i] = t.c[i] + d[i]
			continue
		}
		sl[i] = math.Max(-r[i], 0) + shift
		d[i] = dualScale
	}
	b = b0
	nc := 0
	for i := 0; i < n; i++ {
		if active(i) {
			nc++
			if i < ns {
				nc++
			}
		}
	}

	for iters = 0; iters < maxIter; iters++ {
		t.residuals(r, b)
		// Residuals of the KKT conditions.
		clear(rb)
		primal, dual := 0.0, 0.0
		pinf, dinf, comp := 0.0, 0.0, 0.0
		for i := 0; i < n; i++ {
			if !active(i) {
				continue
			}
			t.addRow(rb, i, -d[i])
			dual += t.y[i] * d[i]
			if i < ns {
				primal += t.a[i]*u[i] + t.c[i]*v[i]
				pinf = math.Max(pinf, math.Abs(r[i]-u[i]+v[i]))
				ra[i] = t.a[i] - d[i] - zu[i]
				rc[i] = t.c[i] + d[i] - zv[i]
				dinf = math.Max(dinf, math.Max(math.Abs(ra[i]), math.Abs(rc[i])))
				comp += u[i]*zu[i] + v[i]*zv[i]
			} else {
				pinf = math.Max(pinf, math.Abs(r[i]+sl[i]))
				comp += sl[i] * d[i]
			}
		}
		for _, x := range rb {
			dinf = math.Max(dinf, math.Abs(x))
		}
		if math.Abs(primal-dual) <= gapTol*(1+math.Abs(primal)) && pinf <= feasTol*ys && dinf <= feasTol*cs*(1+float64(p)) {
			return b, iters, nil
		}
		mu := comp / float64(max(nc, 1))

		// newton solves for the step given complementarity targets.
		newton := func() error {
			for i := 0; i < n; i++ {
				if !active(i) {
					om[i] = 0
					continue
				}
				if i < ns {
					om[i] = 1 / (u[i]/zu[i] + v[i]/zv[i])
					q[i] = (r[i] - u[i] + v[i]) - (cu[i]+u[i]*ra[i])/zu[i] + (cv[i]+v[i]*rc[i])/zv[i]
				} else {
					om[i] = d[i] / sl[i]
					q[i] = (r[i] + sl[i]) + csl[i]/d[i]
				}
			}
			if err := normalSolve(t, msym, &chol, om, q, rb, db); err != nil {
				return err
			}
			for i := 0; i < n; i++ {
				if !active(i) {
					continue
				}
				f, xv := t.row(i)
				xdb := 0.0
				for m, x := range xv {
					xdb += x * db[f+m]
				}
				dd[i] = om[i] * (q[i] - xdb)
				if i < ns {
					dzu[i] = -ra[i] - dd[i]
					dzv[i] = dd[i] - rc[i]
					du[i] = (cu[i] + u[i]*ra[i] + u[i]*dd[i]) / zu[i]
					dv[i] = (cv[i] - v[i]*dd[i] + v[i]*rc[i]) / zv[i]
				} else {
					ds[i] = (csl[i] - sl[i]*dd[i]) / d[i]
				}
			}
			return nil
		}
		steps := func() (ap, ad float64) {
			ap, ad = 1, 1
			lim := func(a, x, dx float64) float64 {
				if dx < 0 {
					return math.Min(a, -x/dx)
				}
				return a
			}
			for i := 0; i < n; i++ {
				if !active(i) {
					continue
				}
				if i < ns {
					ap = lim(lim(ap, u[i], du[i]), v[i], dv[i])
					ad = lim(lim(ad, zu[i], dzu[i]), zv[i], dzv[i])
				} else {
					ap = lim(ap, sl[i], ds[i])
					ad = lim(ad, d[i], dd[i])
				}
			}
			return ap, ad
		}

		// Predictor: the affine-scaling direction.
		for i := 0; i < n; i++ {
			if i < ns {
				cu[i] = -u[i] * zu[i]
				cv[i] = -v[i] * zv[i]
			} else {
				csl[i] = -sl[i] * d[i]
			}
		}
		if err := newton(); err != nil {
			return nil, iters, err
		}
		ap, ad := steps()
		aff := 0.0
		for i := 0; i < n; i++ {
			if !active(i) {
				continue
			}
			if i < ns {
				aff += (u[i]+ap*du[i])*(zu[i]+ad*dzu[i]) + (v[i]+ap*dv[i])*(zv[i]+ad*dzv[i])
			} else {
				aff += (sl[i] + ap*ds[i]) * (d[i] + ad*dd[i])
			}
		}
		sigma := math.Pow(aff/comp, 3)
		// Corrector: centring plus the second-order term of the predictor.
		for i := 0; i < n; i++ {
			if !active(i) {
				continue
			}
			if i < ns {
				cu[i] = sigma*mu - u[i]*zu[i] - du[i]*dzu[i]
				cv[i] = sigma*mu - v[i]*zv[i] - dv[i]*dzv[i]
			} else {
				csl[i] = sigma*mu - sl[i]*d[i] - ds[i]*dd[i]
			}
		}
		if err := newton(); err != nil {
			return nil, iters, err
		}
		ap, ad = steps()
		ap = math.Min(1, boundaryStep*ap)
		ad = math.Min(1, boundaryStep*ad)
		for k := range b {
			b[k] += ap * db[k]
		}
		for i := 0; i < n; i++ {
			if !active(i) {
				continue
			}
			d[i] += ad * dd[i]
			if i < ns {
				u[i] += ap * du[i]
				v[i] += ap * dv[i]
				zu[i] += ad * dzu[i]
				zv[i] += ad * dzv[i]
			} else {
				sl[i] += ap * ds[i]
			}
		}
	}
	// Not converged to the tolerances: the crossover still finds the vertex
	// and the simplex method finishes from there, so the point is usable.
	return b, iters, nil
}

// normalSolve solves (sum_i om_i x_i x_i') db = sum_i x_i om_i q_i - sub
// over the first len(om) rows of t (sub may be nil).
func normalSolve(t *table, m *mat.SymDense, chol *mat.Cholesky, om, q, sub, db []float64) error {
	p := t.p()
	raw := m.RawSymmetric()
	clear(raw.Data)
	rhs := make([]float64, p)
	if sub != nil {
		for k := range rhs {
			rhs[k] = -sub[k]
		}
	}
	for i, o := range om {
		if o == 0 {
			continue
		}
		f, x := t.row(i)
		w := len(x)
		oq := o * q[i]
		for k1, x1 := range x {
			if x1 == 0 {
				continue
			}
			rhs[f+k1] += x1 * oq
			ox := o * x1
			row := raw.Data[(f+k1)*raw.Stride:]
			for k2 := k1; k2 < w; k2++ {
				row[f+k2] += ox * x[k2]
			}
		}
	}
	trace := 0.0
	for k := 0; k < p; k++ {
		trace += raw.Data[k*raw.Stride+k]
	}
	if math.IsNaN(trace) || math.IsInf(trace, 0) {
		return fmt.Errorf("%w: interior point diverged", ErrNoConverge)
	}
	shift := 0.0
	for try := 0; !chol.Factorize(m); try++ {
		if try == ridgeTries {
			return fmt.Errorf("%w: normal equations are singular", ErrRankDeficient)
		}
		step := ridge * math.Max(trace, 1) * math.Pow(100, float64(try))
		for k := 0; k < p; k++ {
			raw.Data[k*raw.Stride+k] += step - shift
		}
		shift = step
	}
	out := mat.NewVecDense(p, db)
	// Late iterations are ill-conditioned by design (Θ spreads over many
	// orders of magnitude); gonum's condition warning is expected then.
	if err := chol.SolveVecTo(out, mat.NewVecDense(p, rhs)); err != nil {
		if _, ok := err.(mat.Condition); !ok {
			return err
		}
	}
	return nil
}
