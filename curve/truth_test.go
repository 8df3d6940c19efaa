package curve

import (
	"math"
	"math/rand/v2"
	"testing"
)

// Known truths for simulation checks. Each is a stated model of a
// measurement's distribution at every age, invented for the tests, whose
// quantiles and z-scores are known exactly, so a reference fitted to a sample
// drawn from it can be scored against the truth.
type truth interface {
	quantile(age, tau float64) float64
	z(age, y float64) float64 // the true z-score of y at age
	draw(rng *rand.Rand, age float64) float64
}

// boxCoxTruth is Box–Cox normal at every age (Cole & Green 1992): y =
// M (1 + L S z)^(1/L), z standard normal.
type boxCoxTruth struct{ l, m, s func(age float64) float64 }

func (b boxCoxTruth) quantile(age, tau float64) float64 {
	return LMSValue(b.l(age), b.m(age), b.s(age), normZ(tau))
}
func (b boxCoxTruth) z(age, y float64) float64 { return LMSZ(b.l(age), b.m(age), b.s(age), y) }
func (b boxCoxTruth) draw(rng *rand.Rand, age float64) float64 {
	for {
		if y := LMSValue(b.l(age), b.m(age), b.s(age), rng.NormFloat64()); y > 0 {
			return y
		}
	}
}

// weightLike is a weight-for-age-like Box–Cox normal truth on 0–60 months:
// a median rising fast in infancy, a coefficient of variation near 0.13 and
// a power L moving from 0.3 to -0.4 (invented, shaped like published
// weight references; no published values are used).
var weightLike = boxCoxTruth{
	l: func(a float64) float64 { return 0.3 - 0.7*a/60 },
	m: func(a float64) float64 { return 3.3 + 6.8*(1-math.Exp(-a/6)) + 0.14*a },
	s: func(a float64) float64 { return 0.14 - 0.02*a/60 + 0.01*math.Exp(-a/3) },
}

// mixtureTruth is a two-component normal mixture at every age, scaled by a
// median-like curve: with probability p the value is m(a) (1 + s1 e), else
// m(a) (shift + s2 e), e standard normal. With shift > 1 it is skewed right
// with a long, heavy upper tail: not Box–Cox normal.
type mixtureTruth struct {
	m                func(age float64) float64
	p, s1, shift, s2 float64
}

func (x mixtureTruth) cdf(age, y float64) float64 {
	r := y / x.m(age)
	return x.p*normP((r-1)/x.s1) + (1-x.p)*normP((r-x.shift)/x.s2)
}

func (x mixtureTruth) quantile(age, tau float64) float64 {
	lo, hi := 0.0, x.m(age)*(x.shift+12*x.s2)
	for range 200 { // bisection to the last bit of a float64
		mid := (lo + hi) / 2
		if x.cdf(age, mid) < tau {
			lo = mid
		} else {
			hi = mid
		}
	}
	return (lo + hi) / 2
}

func (x mixtureTruth) z(age, y float64) float64 { return normZ(x.cdf(age, y)) }

func (x mixtureTruth) draw(rng *rand.Rand, age float64) float64 {
	if rng.Float64() < x.p {
		return x.m(age) * (1 + x.s1*rng.NormFloat64())
	}
	return x.m(age) * (x.shift + x.s2*rng.NormFloat64())
}

// sinhArcsinhTruth is the sinh-arcsinh distribution of Jones & Pewsey
// (2009, Biometrika 96, 761–780) with tail weight 1: y = mu + sigma
// sinh(asinh(z) + eps), z standard normal. eps > 0 skews it right, eps < 0
// left.
type sinhArcsinhTruth struct{ mu, sigma, eps func(age float64) float64 }

func (h sinhArcsinhTruth) quantile(age, tau float64) float64 {
	return h.mu(age) + h.sigma(age)*math.Sinh(math.Asinh(normZ(tau))+h.eps(age))
}
func (h sinhArcsinhTruth) z(age, y float64) float64 {
	return math.Sinh(math.Asinh((y-h.mu(age))/h.sigma(age)) - h.eps(age))
}
func (h sinhArcsinhTruth) draw(rng *rand.Rand, age float64) float64 {
	return h.mu(age) + h.sigma(age)*math.Sinh(math.Asinh(rng.NormFloat64())+h.eps(age))
}

// heightLike returns a 0–19 year height-like truth (cm) with a pubertal
// spurt at age peak: growth fast in infancy, about 6 cm a year in childhood,
// a spurt of the given gain, and none after about 18; the spread widens
// through the spurt (children reach it at different ages), and the
// skewness turns from right (eps 0.25) to left (eps -0.25) through puberty.
// Invented for the tests.
func heightLike(peak, gain float64) sinhArcsinhTruth {
	logistic := func(x float64) float64 { return 1 / (1 + math.Exp(-x)) }
	// softMin is a smooth min(a, c): childhood growth stops at c.
	softMin := func(a, c float64) float64 { return c - math.Log1p(math.Exp(c-a)) }
	return sinhArcsinhTruth{
		mu: func(a float64) float64 {
			return 50 + 30*(1-math.Exp(-a/0.9)) + 5.6*(softMin(a, peak-1)-softMin(0, peak-1)) + gain*(logistic((a-peak)/1.1)-logistic(-peak/1.1))
		},
		sigma: func(a float64) float64 { return 1.9 + 0.3*a + 2.5*math.Exp(-math.Pow((a-peak)/1.6, 2)) },
		eps:   func(a float64) float64 { return 0.25 - 0.5*logistic((a-peak)/1.0) },
	}
}

// sample draws n rows from a truth at ages uniform on [a0, a1].
func sample(rng *rand.Rand, tr truth, n int, a0, a1 float64, stratum string, d *Data) {
	for range n {
		age := a0 + (a1-a0)*rng.Float64()
		d.Age = append(d.Age, age)
		d.Value = append(d.Value, tr.draw(rng, age))
		if stratum != "" {
			d.Stratum = append(d.Stratum, stratum)
		}
	}
}

// zError scores the truth's quantiles at the given ages and normal scores
// against the reference and returns the mean and largest |z - true z|.
func zError(t *testing.T, r *Reference, stratum string, tr truth, ages, zs []float64) (mean, worst float64) {
	t.Helper()
	n := 0
	for _, a := range ages {
		for _, z := range zs {
			sc, err := r.Score(stratum, a, tr.quantile(a, normP(z)))
			if err != nil {
				t.Fatalf("age %g z %g: %v", a, z, err)
			}
			e := math.Abs(sc.Z - z)
			mean += e
			worst = max(worst, e)
			n++
		}
	}
	return mean / float64(n), worst
}
