package cohort

import (
	"math"

	"gonum.org/v1/gonum/stat/distuv"
)

// Estimate is a point estimate with its standard error and interval.
type Estimate struct {
	Value float64 `json:"value"`
	SE    float64 `json:"se"`
	Lo    float64 `json:"lo"`
	Hi    float64 `json:"hi"`
}

// Share is the estimated share of rows beyond a cut with its Wilson
// interval at the effective sample size, and the share the reference
// implies.
type Share struct {
	Estimate
	Expected float64 `json:"expected"` // share under the reference, N(0,1)
	DEff     float64 `json:"deff"`     // design effect used (1 for plain rows)
	NEff     float64 `json:"n_eff"`    // effective size n/deff of the Wilson interval
	// Off: Expected lies outside the interval.
	Off bool `json:"off"`
}

// sample is one group's rows: z-scores, weights and dense subject indices.
type sample struct {
	z, w      []float64
	cl        []int // subject index of each row, in [0, g)
	g         int   // subjects
	clustered bool  // subject ids were given
	weighted  bool  // survey weights were given
}

// ratio returns the weighted mean of y and its cluster-robust (sandwich)
// variance, G/(G-1) sum_g (sum_{i in g} w_i (y_i - m))^2 / W^2; NaN
// variance for fewer than two subjects.
//
// References:
//   - Binder D A (1983). On the variances of asymptotically normal
//     estimators from complex surveys. International Statistical Review 51,
//     279–292.
//   - Liang K-Y, Zeger S L (1986). Longitudinal data analysis using
//     generalized linear models. Biometrika 73, 13–22.
func (s *sample) ratio(y []float64) (m, v float64) {
	var sw, swy float64
	for i, yi := range y {
		sw += s.w[i]
		swy += s.w[i] * yi
	}
	m = swy / sw
	if s.g < 2 {
		return m, math.NaN()
	}
	u := make([]float64, s.g)
	for i, yi := range y {
		u[s.cl[i]] += s.w[i] * (yi - m)
	}
	var ss float64
	for _, ug := range u {
		ss += ug * ug
	}
	g := float64(s.g)
	return m, g / (g - 1) * ss / (sw * sw)
}

// sd is the weighted standard deviation of z about m with the n/(n-1)
// correction (the ordinary sample SD for unit weights); NaN for one row.
func (s *sample) sd(m float64) float64 {
	n := len(s.z)
	if n < 2 {
		return math.NaN()
	}
	var sw, ss float64
	for i, z := range s.z {
		d := z - m
		sw += s.w[i]
		ss += s.w[i] * d * d
	}
	return math.Sqrt(ss / sw * float64(n) / float64(n-1))
}

// mean estimates the mean z with its t interval on G-1 degrees of freedom.
func (s *sample) mean(level float64) (Estimate, float64) {
	m, v := s.ratio(s.z)
	e := Estimate{Value: m, SE: math.Sqrt(v), Lo: math.NaN(), Hi: math.NaN()}
	if s.g >= 2 {
		t := distuv.StudentsT{Mu: 0, Sigma: 1, Nu: float64(s.g - 1)}.Quantile((1 + level) / 2)
		e.Lo, e.Hi = m-t*e.SE, m+t*e.SE
	}
	return e, v
}

// share estimates the share of rows with in(z) true. Its Wilson interval
// uses n_eff = n/deff with deff = V/(p(1-p)/n), V the sandwich variance:
// 1 exactly for unweighted rows without subject ids. Where p is 0 or 1 the
// share's own deff cannot be estimated and meanDeff, the design effect of
// the mean z of the same rows, stands in.
func (s *sample) share(in func(float64) bool, expected, level, meanDeff float64) Share {
	y := make([]float64, len(s.z))
	for i, z := range s.z {
		if in(z) {
			y[i] = 1
		}
	}
	p, v := s.ratio(y)
	n := float64(len(y))
	deff := 1.0
	if s.clustered || s.weighted {
		deff = meanDeff
		if srs := p * (1 - p) / n; srs > 0 && v > 0 {
			deff = v / srs
		}
		if !(deff > 0) || math.IsInf(deff, 0) {
			deff = 1
		}
	}
	out := Share{Estimate: Estimate{Value: p, SE: math.Sqrt(v)}, Expected: expected, DEff: deff, NEff: n / deff}
	out.Lo, out.Hi = wilson(p, out.NEff, normQ((1+level)/2))
	out.Off = expected < out.Lo || expected > out.Hi
	return out
}

// wilson returns the Wilson (1927) score interval for a share p observed in
// n trials (n need not be whole: it may be an effective size, Kish 1965)
// with normal quantile c:
//
//	(p + c^2/2n ± c sqrt(p(1-p)/n + c^2/4n^2)) / (1 + c^2/n).
//
// References:
//   - Wilson E B (1927). Probable inference, the law of succession, and
//     statistical inference. Journal of the American Statistical
//     Association 22, 209–212.
//   - Kish L (1965). Survey Sampling. Wiley, New York.
func wilson(p, n, c float64) (lo, hi float64) {
	if !(n > 0) {
		return 0, 1
	}
	c2 := c * c
	mid := p + c2/(2*n)
	half := c * math.Sqrt(p*(1-p)/n+c2/(4*n*n))
	den := 1 + c2/n
	return max((mid-half)/den, 0), min((mid+half)/den, 1)
}

// normQ is the standard normal quantile.
func normQ(p float64) float64 { return distuv.UnitNormal.Quantile(p) }

// normP is the standard normal distribution function.
func normP(z float64) float64 { return distuv.UnitNormal.CDF(z) }
