package curve

import (
	"fmt"
	"math"
)

// LMSValue returns the measurement at z-score z of the Box–Cox normal
// distribution with power L, median M and coefficient of variation S:
//
//	y = M (1 + L S z)^(1/L)   (L != 0),   y = M exp(S z)   (L = 0).
//
// The L != 0 branch is computed as M exp(log1p(L S z)/L), which tends to the
// L = 0 branch continuously as L -> 0. Where 1 + L S z <= 0 the
// distribution has no such quantile and the result is NaN.
//
// References:
//   - Cole T J (1990). The LMS method for constructing normalized growth
//     standards. European Journal of Clinical Nutrition 44, 45–60.
//   - Cole T J, Green P J (1992). Smoothing reference centile curves: the LMS
//     method and penalized likelihood. Statistics in Medicine 11, 1305–1319.
func LMSValue(l, m, s, z float64) float64 {
	if l == 0 {
		return m * math.Exp(s*z)
	}
	a := l * s * z
	if !(a > -1) {
		return math.NaN()
	}
	return m * math.Exp(math.Log1p(a)/l)
}

// LMSZ returns the z-score of the measurement y > 0 under the Box–Cox normal
// distribution (L, M, S), the inverse of LMSValue:
//
//	z = ((y/M)^L - 1)/(L S)   (L != 0),   z = log(y/M)/S   (L = 0),
//
// computed as expm1(L log(y/M))/(L S), continuous as L -> 0. y <= 0 gives
// NaN.
//
// References:
//   - Cole T J, Green P J (1992). Statistics in Medicine 11, 1305–1319.
func LMSZ(l, m, s, y float64) float64 {
	if !(y > 0) {
		return math.NaN()
	}
	lr := math.Log(y / m)
	if l == 0 {
		return lr / s
	}
	return math.Expm1(l*lr) / (l * s)
}

// LMS is the Box–Cox normal summary (Cole & Green 1992) of a reference's
// centiles at one age: power L, median M, coefficient of variation S, and
// Misfit, the largest |LMSZ(L, M, S, q) - Phi^-1(tau)| over the chart
// centiles q of levels tau, which says how well the three numbers describe
// the fitted distribution (0 when it is exactly Box–Cox normal).
type LMS struct {
	L, M, S float64
	Misfit  float64
}

// Settings of the LMS summary fit.
const (
	// lmsTauLo and lmsTauHi bound the grid taus the summary is fitted to:
	// the outermost centiles of a quantile-regression reference rest on few
	// observations, and a summary meant to describe the body of the
	// distribution should not be pulled by them (3rd to 97th centile, the
	// usual chart range).
	lmsTauLo, lmsTauHi = 0.03, 0.97
	// lmsLMin and lmsLMax bracket the power L: growth measurements have
	// |L| of a few units at most, and a fit outside is not a useful summary.
	lmsLMin, lmsLMax = -6.0, 6.0
	// lmsScan is the number of equal steps of the coarse scan of the
	// bracket that finds where the golden-section search starts, so a
	// second local minimum of the profile is not mistaken for the best.
	lmsScan = 48
	// lmsTolL is the width of the final golden-section bracket on L; the
	// recovered L is good to about this, M and S correspondingly.
	lmsTolL = 1e-9
)

// LMS fits the Box–Cox normal triple to the fitted centiles of the stratum
// at the given age and returns it with its misfit.
//
// It minimises, over the grid taus between 0.03 and 0.97,
//
//	sum_k (LMSZ(L, M, S, q_k) - Phi^-1(tau_k))^2
//
// For fixed L, LMSZ is linear in h_k = ((q_k/g)^L - 1)/L (log(q_k/g) at
// L = 0), g the geometric mean of the q_k: LMSZ = a + b h_k with
// S = 1/(b - L a) and M = g (1 - L a/b)^(1/L) (g exp(-a/b) at L = 0), so M
// and S follow from a straight-line least-squares fit of z on h, in closed
// form. The profile residual sum of squares is then minimised over L by a
// scan of [-6, 6] followed by golden-section search (Kiefer 1953) in the
// best scan cell.
//
// Errors wrap ErrUnknownStratum, ErrAgeRange, ErrDegenerate (fewer than
// three distinct centiles to fit, or centiles not positive, which Box–Cox
// cannot describe).
//
// References:
//   - Box G E P, Cox D R (1964). An analysis of transformations. Journal of
//     the Royal Statistical Society B 26, 211–252.
//   - Cole T J, Green P J (1992). Statistics in Medicine 11, 1305–1319.
//   - Kiefer J (1953). Sequential minimax search for a maximum. Proceedings
//     of the American Mathematical Society 4, 502–506.
func (r *Reference) LMS(stratum string, age float64) (LMS, error) {
	q, err := r.Curve(nil, stratum, age)
	if err != nil {
		return LMS{}, err
	}
	st, _ := r.Stratum(stratum) // Curve found it
	var fq, fz []float64
	for k, tau := range st.Taus {
		if tau >= lmsTauLo-tauSlack && tau <= lmsTauHi+tauSlack {
			fq = append(fq, q[k])
			fz = append(fz, normZ(tau))
		}
	}
	if len(fq) < 3 {
		return LMS{}, fmt.Errorf("%w: %d grid taus in [%g, %g], need 3 for an LMS summary", ErrDegenerate, len(fq), lmsTauLo, lmsTauHi)
	}
	if !(fq[0] > 0) {
		return LMS{}, fmt.Errorf("%w: centile %g is not positive; the LMS summary needs positive centiles", ErrDegenerate, fq[0])
	}
	if !(fq[0] < fq[len(fq)-1]) {
		return LMS{}, fmt.Errorf("%w: all centiles equal %g", ErrDegenerate, fq[0])
	}
	fit := newLMSFit(fq, fz)
	l := fit.bestL()
	out, ok := fit.triple(l)
	if !ok {
		return LMS{}, fmt.Errorf("%w: no Box–Cox normal fits the centiles", ErrDegenerate)
	}
	for _, c := range st.Chart {
		k := gridIndex(st.Taus, c)
		out.Misfit = max(out.Misfit, math.Abs(LMSZ(out.L, out.M, out.S, q[k])-normZ(st.Taus[k])))
	}
	return out, nil
}

// lmsFit holds the centiles q and normal scores z the triple is fitted to,
// and the geometric mean g of q that centres the Box–Cox transform.
type lmsFit struct {
	q, z, h []float64
	logG    float64
}

func newLMSFit(q, z []float64) *lmsFit {
	s := 0.0
	for _, v := range q {
		s += math.Log(v)
	}
	return &lmsFit{q: q, z: z, h: make([]float64, len(q)), logG: s / float64(len(q))}
}

// line fits z = a + b h(L) by least squares and returns a, b and the
// residual sum of squares.
func (f *lmsFit) line(l float64) (a, b, rss float64) {
	n := float64(len(f.q))
	mh, mz := 0.0, 0.0
	for k, v := range f.q {
		lr := math.Log(v) - f.logG
		if l == 0 {
			f.h[k] = lr
		} else {
			f.h[k] = math.Expm1(l*lr) / l
		}
		mh += f.h[k]
		mz += f.z[k]
	}
	mh /= n
	mz /= n
	sxx, sxy := 0.0, 0.0
	for k, h := range f.h {
		dx, dy := h-mh, f.z[k]-mz
		sxx += dx * dx
		sxy += dx * dy
	}
	b = sxy / sxx
	a = mz - b*mh
	// Sum the squared residuals themselves: Syy - b Sxy cancels to rounding
	// noise near an exact fit, which would blur the minimum over L.
	for k, h := range f.h {
		e := f.z[k] - a - b*h
		rss += e * e
	}
	return a, b, rss
}

// profile is the residual sum of squares at L, +Inf where the line does not
// map back to a Box–Cox normal with S > 0.
func (f *lmsFit) profile(l float64) float64 {
	a, b, rss := f.line(l)
	if !(b > 0) || !(b-l*a > 0) {
		return math.Inf(1)
	}
	return rss
}

// triple returns L, M and S for the power l.
func (f *lmsFit) triple(l float64) (LMS, bool) {
	a, b, _ := f.line(l)
	if !(b > 0) || !(b-l*a > 0) {
		return LMS{}, false
	}
	out := LMS{L: l, S: 1 / (b - l*a)}
	if l == 0 {
		out.M = math.Exp(f.logG - a/b)
	} else {
		out.M = math.Exp(f.logG + math.Log1p(-l*a/b)/l)
	}
	return out, isFin(out.M) && isFin(out.S)
}

// bestL scans the bracket and refines the best cell by golden-section
// search.
func (f *lmsFit) bestL() float64 {
	step := (lmsLMax - lmsLMin) / lmsScan
	best, bestV := 0.0, f.profile(0)
	for i := 0; i <= lmsScan; i++ {
		l := lmsLMin + float64(i)*step
		if v := f.profile(l); v < bestV {
			best, bestV = l, v
		}
	}
	lo, hi := max(best-step, lmsLMin), min(best+step, lmsLMax)
	const invPhi = 0.6180339887498949 // (sqrt(5)-1)/2, exact identity
	x1 := hi - invPhi*(hi-lo)
	x2 := lo + invPhi*(hi-lo)
	f1, f2 := f.profile(x1), f.profile(x2)
	for hi-lo > lmsTolL {
		if f1 <= f2 {
			hi, x2, f2 = x2, x1, f1
			x1 = hi - invPhi*(hi-lo)
			f1 = f.profile(x1)
		} else {
			lo, x1, f1 = x1, x2, f2
			x2 = lo + invPhi*(hi-lo)
			f2 = f.profile(x2)
		}
	}
	l := (lo + hi) / 2
	if f.profile(l) > bestV { // the scan point was better (flat profile)
		return best
	}
	return l
}
