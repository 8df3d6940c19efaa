package curve

import (
	"math"
	"testing"

	"gonum.org/v1/gonum/mat"
	"gonum.org/v1/gonum/optimize"

	"growband/spline"
)

// boxCoxML is an independent comparison written in the tests from the
// published formulas: a Box–Cox normal fitted by maximum likelihood with L,
// log M and log S each a cubic B-spline in transformed age, the model of
// the LMS method (Cole & Green 1992, Statistics in Medicine 11,
// 1305–1319, equation for the log-likelihood of one observation:
// L log(y/M) - log S - z^2/2, dropping terms free of the parameters). The
// number of interior knots is chosen from candidates by the Schwarz
// criterion, so the comparison gets the flexibility the data support. It is
// maximised by gonum's BFGS with the analytic gradient.
type boxCoxML struct {
	scale AgeScale
	b     *spline.Basis
	coef  []float64 // L, then log M, then log S coefficients
}

func fitBoxCoxML(t *testing.T, age, y []float64, scale AgeScale) *boxCoxML {
	t.Helper()
	tt := make([]float64, len(age))
	for i, a := range age {
		v, err := scale.Apply(a)
		if err != nil {
			t.Fatal(err)
		}
		tt[i] = v
	}
	lo, hi := math.Inf(1), math.Inf(-1)
	for _, v := range tt {
		lo, hi = min(lo, v), max(hi, v)
	}
	var best *boxCoxML
	bestSIC := math.Inf(1)
	for _, k := range []int{2, 4, 6, 8} {
		interior, err := spline.QuantileKnots(tt, k)
		if err != nil {
			t.Fatal(err)
		}
		knots, err := spline.Clamped(lo, hi, interior, 3)
		if err != nil {
			t.Fatal(err)
		}
		b, err := spline.New(knots, 3)
		if err != nil {
			t.Fatal(err)
		}
		m := &boxCoxML{scale: scale, b: b}
		nll := m.fit(t, tt, y)
		p := float64(len(m.coef))
		sic := nll + 0.5*p*math.Log(float64(len(y)))
		if sic < bestSIC {
			best, bestSIC = m, sic
		}
	}
	return best
}

// fit maximises the likelihood and returns the negative log-likelihood.
func (m *boxCoxML) fit(t *testing.T, tt, y []float64) float64 {
	t.Helper()
	p := m.b.Len()
	n := len(y)
	// Start: L = 1, log M and log S from least squares on log y.
	first := make([]int, n)
	w := make([][]float64, n)
	x := mat.NewDense(n, p, nil)
	ly := make([]float64, n)
	for i, v := range tt {
		w[i] = make([]float64, 4)
		f, err := m.b.Eval(w[i], v)
		if err != nil {
			t.Fatal(err)
		}
		first[i] = f
		for j, bv := range w[i] {
			x.Set(i, f+j, bv)
		}
		ly[i] = math.Log(y[i])
	}
	var qr mat.QR
	qr.Factorize(x)
	var lm mat.VecDense
	if err := qr.SolveVecTo(&lm, false, mat.NewVecDense(n, ly)); err != nil {
		t.Fatal(err)
	}
	ss := 0.0
	for i := range n {
		r := ly[i] - mat.Dot(x.RowView(i), &lm)
		ss += r * r
	}
	x0 := make([]float64, 3*p)
	for j := range p {
		x0[j] = 1
		x0[p+j] = lm.AtVec(j)
		x0[2*p+j] = 0.5 * math.Log(ss/float64(n))
	}
	at := func(c []float64, i int) float64 {
		s := 0.0
		for j, bv := range w[i] {
			s += c[first[i]+j] * bv
		}
		return s
	}
	eval := func(grad, c []float64) float64 {
		for j := range grad {
			grad[j] = 0
		}
		nll := 0.0
		for i := range n {
			l, lM, lS := at(c[:p], i), at(c[p:2*p], i), at(c[2*p:], i)
			s := math.Exp(lS)
			r := math.Log(y[i]) - lM
			var z, dzdL float64
			u := l * r
			if math.Abs(u) < 1e-8 {
				z = r / s * (1 + u/2)
				dzdL = r * r / (2 * s)
			} else {
				e := math.Expm1(u)
				z = e / (l * s)
				dzdL = (r*(e+1)*l - e) / (l * l * s)
			}
			nll -= l*r - lS - z*z/2
			dM := -l + z*math.Exp(u)/s // d loglik / d log M
			dS := -1 + z*z             // d loglik / d log S
			dL := r - z*dzdL           // d loglik / d L
			for j, bv := range w[i] {
				grad[first[i]+j] -= dL * bv
				grad[p+first[i]+j] -= dM * bv
				grad[2*p+first[i]+j] -= dS * bv
			}
		}
		return nll
	}
	prob := optimize.Problem{
		Func: func(c []float64) float64 { return eval(make([]float64, len(c)), c) },
		Grad: func(grad, c []float64) { eval(grad, c) },
	}
	res, err := optimize.Minimize(prob, x0, &optimize.Settings{MajorIterations: 2000}, &optimize.BFGS{})
	if err != nil && res == nil {
		t.Fatal(err)
	}
	m.coef = res.X
	return res.F
}

// z returns the fitted model's z-score of y at age.
func (m *boxCoxML) z(age, y float64) float64 {
	tv, _ := m.scale.Apply(age)
	lo, hi := m.b.Range()
	tv = min(max(tv, lo), hi)
	p := m.b.Len()
	l, _ := m.b.Value(m.coef[:p], tv)
	lM, _ := m.b.Value(m.coef[p:2*p], tv)
	lS, _ := m.b.Value(m.coef[2*p:], tv)
	return LMSZ(l, math.Exp(lM), math.Exp(lS), y)
}
