package curve

import (
	"fmt"
	"math"
	"sort"

	"gonum.org/v1/gonum/mat"

	"growband/spline"
)

// Tail is a stratum's model of the whole distribution at every age: the
// body, where the fitted quantile curves are read directly, and a Box–Cox
// normal fitted to many centiles of that body, which gives the z-scores and
// quantiles beyond it.
//
// The body is the grid taus from Lo to Hi: those with at least TailMinCount
// expected observations beyond them in the sparsest guard window (see
// bodyLimits). Beyond it a single extreme quantile regression rests on a
// few dozen rows, and the spacing of the two outermost curves, which an
// earlier rule extended, rests on fewer still; in simulation (tail_test.go)
// that rule scored children with 2 <= |true z| <= 3.5 about 0.09 z off on
// average at n = 20,000. Here every body centile informs the tail: at each
// of the ages Ages (equally spaced in transformed age) the Box–Cox normal
// (L, M, S) of Cole & Green (1992) is fitted by least squares in z to the
// body centiles, as Cole (1988) fitted it to empirical centiles; L, which
// carries the skewness and is the least well determined, is then smoothed
// across age by a cubic polynomial in transformed age (the LMS method gives
// L the fewest degrees of freedom of the three, Cole & Green 1992), and M
// and S are refitted with L fixed.
//
// A value v below the lowest body centile q_lo (level tau_lo) at an age
// scores
//
//	z = Phi^-1(tau_lo) + Zbc(v) - Zbc(q_lo),   Zbc = LMSZ(L, M, S, .)
//
// with L, M and S interpolated linearly in age between the tabulated ages,
// and symmetrically above the highest. The join is continuous, z is
// strictly increasing in v, and quantiles beyond the body are the inverse,
// so Score(Quantile(tau)) gives back tau everywhere. Within the body the
// exact, non-crossing quantile regression curves decide, so distributions
// that are not Box–Cox normal keep their shape where the data show it.
//
// References:
//   - Cole T J (1988). Fitting smoothed centile curves to reference data.
//     Journal of the Royal Statistical Society A 151, 385–418.
//   - Cole T J, Green P J (1992). Smoothing reference centile curves: the LMS
//     method and penalized likelihood. Statistics in Medicine 11, 1305–1319.
//
// Growth measurements are positive and Shift is 0. For data whose body
// centiles reach zero or below somewhere (a change score, say), the model
// is fitted to value + Shift, with Shift the body's whole range less its
// lowest centile, so that every body centile maps above zero; values at or
// below -Shift are outside the model and are not scored.
type Tail struct {
	Lo    float64   `json:"lo"` // lowest grid tau of the body
	Hi    float64   `json:"hi"` // highest grid tau of the body
	Shift float64   `json:"shift,omitempty"`
	Ages  []float64 `json:"ages"` // increasing, from AgeMin to AgeMax
	L     []float64 `json:"l"`
	M     []float64 `json:"m"`
	S     []float64 `json:"s"`
}

// TailMinCount is the fewest observations expected beyond a grid centile in
// the sparsest guard window for the centile to belong to the body. With k
// expected beyond it, the share beyond a fitted quantile has a relative
// binomial standard error of about 1/sqrt(k): 14% at 50, which at the 3rd
// centile is about 0.03 z.
const TailMinCount = 50

const (
	// tailAges is the number of ages at which the tail model is tabulated,
	// equally spaced in transformed age: dense enough that linear
	// interpolation of L, M and S between them is far below their sampling
	// error.
	tailAges = 81
	// tailLDegree is the degree of the polynomial in transformed age that
	// smooths L.
	tailLDegree = 3
	// bodyMinTau bounds the body from inside: it always reaches the usual
	// chart range, 3rd to 97th centile. Fitted to a narrower body the
	// Box–Cox power is guesswork: the skewness shows in the outer centiles,
	// and at n = 1000 (ExampleFit) a body of the quartiles put the 3rd
	// centile 0.27 SD from the truth where the quantile regression's own
	// 3rd centile was 0.13 SD off.
	bodyMinTau = 0.03
)

// bodyLimits returns the indices of the lowest and highest grid taus of the
// body, given the smallest effective sample size of the guard windows (0
// when unknown: the body is then the usual chart range 3rd to 97th centile).
// The body always reaches the 3rd and 97th centiles (or the grid's ends)
// and holds three taus at the least.
func bodyLimits(taus []float64, neffMin float64) (lo, hi int) {
	n := len(taus)
	lo, hi = n-1, 0
	for k, tau := range taus {
		var in bool
		if neffMin > 0 {
			in = neffMin*min(tau, 1-tau) >= TailMinCount
		} else {
			in = tau >= lmsTauLo-tauSlack && tau <= lmsTauHi+tauSlack
		}
		if in || (tau >= bodyMinTau-tauSlack && tau <= 1-bodyMinTau+tauSlack) {
			lo, hi = min(lo, k), max(hi, k)
		}
	}
	if lo > hi { // a grid with nothing in the chart range: all of it
		return 0, n - 1
	}
	for hi-lo < 2 && (lo > 0 || hi < n-1) { // three taus at the least
		lo, hi = max(lo-1, 0), min(hi+1, n-1)
	}
	return lo, hi
}

// body returns the body limits of st as grid indices.
func (st *Stratum) body() (lo, hi int) {
	if t := st.Tail; t != nil {
		return gridIndex(st.Taus, t.Lo), gridIndex(st.Taus, t.Hi)
	}
	neff := 0.0
	if st.N > 0 {
		neff = float64(st.N) / DefaultGuardWindows
	}
	return bodyLimits(st.Taus, neff)
}

// fitTail fits the tail model of a stratum whose grid curves are fitted, for
// the body limits lo and hi (grid indices). It returns an error wrapping
// ErrDegenerate when the body centiles are not positive and increasing at
// some age: the Box–Cox normal describes positive measurements.
func fitTail(st *Stratum, b *spline.Basis, scale AgeScale, degree, lo, hi int) (*Tail, error) {
	if hi-lo+1 < 3 {
		return nil, fmt.Errorf("%w: %d centiles in the body, the tail model needs 3", ErrDegenerate, hi-lo+1)
	}
	t0, err := scale.Apply(st.AgeMin)
	if err != nil {
		return nil, err
	}
	t1, err := scale.Apply(st.AgeMax)
	if err != nil {
		return nil, err
	}
	bl, bh := b.Range()
	tl := &Tail{Lo: st.Taus[lo], Hi: st.Taus[hi],
		Ages: make([]float64, tailAges), L: make([]float64, tailAges),
		M: make([]float64, tailAges), S: make([]float64, tailAges)}
	z := make([]float64, hi-lo+1)
	for k := range z {
		z[k] = normZ(st.Taus[lo+k])
	}
	q := make([]float64, len(st.Taus))
	w := make([]float64, degree+1)
	bodies := make([][]float64, tailAges)
	u := make([]float64, tailAges)
	lowest, highest := math.Inf(1), math.Inf(-1)
	for i := range tailAges {
		u[i] = float64(i) / (tailAges - 1)
		t := t0 + u[i]*(t1-t0)
		switch i {
		case 0:
			tl.Ages[i] = st.AgeMin
		case tailAges - 1:
			tl.Ages[i] = st.AgeMax
		default:
			tl.Ages[i] = scale.invert(t)
		}
		if err := curveAt(q, st, b, min(max(t, bl), bh), w, 0); err != nil {
			return nil, err
		}
		bodies[i] = append([]float64(nil), q[lo:hi+1]...)
		lowest = min(lowest, q[lo])
		highest = max(highest, q[hi])
	}
	if !(lowest > 0) {
		tl.Shift = highest - 2*lowest
	}
	// Fit each age on its own; an age whose body centiles coincide (a
	// degenerate fit there) takes the nearest fitted age's triple.
	fits := make([]*lmsFit, tailAges)
	raw := make([]float64, tailAges)
	var us, ls []float64
	for i, body := range bodies {
		if !(body[0] < body[len(body)-1]) {
			continue
		}
		for k := range body {
			body[k] += tl.Shift
		}
		fits[i] = newLMSFit(body, z)
		raw[i] = fits[i].bestL()
		us, ls = append(us, u[i]), append(ls, raw[i])
	}
	if len(us) <= tailLDegree {
		return nil, fmt.Errorf("%w: the centiles from %g to %g coincide at most ages; no tail model fits", ErrDegenerate, tl.Lo, tl.Hi)
	}
	coef := polyFit(us, ls, tailLDegree)
	ok := make([]bool, tailAges)
	for i, f := range fits {
		if f == nil {
			continue
		}
		l := min(max(polyAt(coef, u[i]), lmsLMin), lmsLMax)
		tr, good := f.triple(l)
		if !good { // the smoothed power does not map back here: keep this age's own
			tr, good = f.triple(raw[i])
		}
		if good {
			tl.L[i], tl.M[i], tl.S[i], ok[i] = tr.L, tr.M, tr.S, true
		}
	}
	for i := range ok {
		if ok[i] {
			continue
		}
		near := -1
		for d := 1; d < tailAges && near < 0; d++ {
			switch {
			case i-d >= 0 && ok[i-d]:
				near = i - d
			case i+d < tailAges && ok[i+d]:
				near = i + d
			}
		}
		if near < 0 {
			return nil, fmt.Errorf("%w: no Box–Cox normal fits the centiles from %g to %g at any age", ErrDegenerate, tl.Lo, tl.Hi)
		}
		tl.L[i], tl.M[i], tl.S[i] = tl.L[near], tl.M[near], tl.S[near]
	}
	return tl, nil
}

// polyFit returns the coefficients of the least-squares polynomial of the
// given degree through (u, y), u in [0, 1], so the Vandermonde columns are
// well scaled for the QR factorisation. It panics when fewer than degree+1
// points are given: a programming mistake.
func polyFit(u, y []float64, degree int) []float64 {
	n, p := len(u), degree+1
	if n < p {
		panic(fmt.Sprintf("curve: polyFit: %d points for degree %d", n, degree))
	}
	x := mat.NewDense(n, p, nil)
	for i, v := range u {
		c := 1.0
		for j := range p {
			x.Set(i, j, c)
			c *= v
		}
	}
	var qr mat.QR
	qr.Factorize(x)
	var beta mat.VecDense
	if err := qr.SolveVecTo(&beta, false, mat.NewVecDense(n, append([]float64(nil), y...))); err != nil {
		// Distinct points in [0, 1] make x of full rank; repeated ones
		// cannot occur (the ages are distinct).
		panic("curve: polyFit: " + err.Error())
	}
	return beta.RawVector().Data
}

// polyAt evaluates the polynomial with coefficients c at u.
func polyAt(c []float64, u float64) float64 {
	s := 0.0
	for j := len(c) - 1; j >= 0; j-- {
		s = s*u + c[j]
	}
	return s
}

// at returns L, M and S at age, linear between the tabulated ages (the end
// values outside them, which the age range check makes unreachable).
func (tl *Tail) at(age float64) (l, m, s float64) {
	a := tl.Ages
	k := sort.SearchFloat64s(a, age) // first a[k] >= age
	switch {
	case k == 0:
		return tl.L[0], tl.M[0], tl.S[0]
	case k == len(a):
		k = len(a) - 1
		return tl.L[k], tl.M[k], tl.S[k]
	}
	f := (age - a[k-1]) / (a[k] - a[k-1])
	lerp := func(v []float64) float64 { return v[k-1] + f*(v[k]-v[k-1]) }
	return lerp(tl.L), lerp(tl.M), lerp(tl.S)
}

// tailZ returns the z-score of v beyond the body edge (edge value qe of
// level tauE) at age, by the rule on Tail.
func (tl *Tail) tailZ(age, qe, tauE, v float64) (float64, error) {
	if !(v+tl.Shift > 0) {
		return 0, fmt.Errorf("%w: %g lies outside the Box–Cox tail model (values above %g)", ErrValue, v, -tl.Shift)
	}
	l, m, s := tl.at(age)
	return normZ(tauE) + LMSZ(l, m, s, v+tl.Shift) - LMSZ(l, m, s, qe+tl.Shift), nil
}

// tailValue is the inverse of tailZ: the value of z-score z beyond the body
// edge.
func (tl *Tail) tailValue(age, qe, tauE, z float64) (float64, error) {
	l, m, s := tl.at(age)
	v := LMSValue(l, m, s, LMSZ(l, m, s, qe+tl.Shift)+z-normZ(tauE)) - tl.Shift
	if !isFin(v) {
		return 0, fmt.Errorf("%w: z %.4g at age %g lies beyond the support of the Box–Cox tail (L %.3g)", ErrTauRange, z, age, l)
	}
	return v, nil
}

// checkTail validates a stored tail model against its stratum.
func checkTail(st *Stratum) error {
	tl := st.Tail
	bad := func(format string, a ...any) error {
		return fmt.Errorf("%w: stratum %q: tail: %s", ErrInvalid, st.Name, fmt.Sprintf(format, a...))
	}
	lo, hi := gridIndex(st.Taus, tl.Lo), gridIndex(st.Taus, tl.Hi)
	if lo < 0 || hi < 0 || hi-lo < 2 {
		return bad("body [%g, %g] is not three or more grid taus", tl.Lo, tl.Hi)
	}
	n := len(tl.Ages)
	if !(tl.Shift >= 0) || !isFin(tl.Shift) {
		return bad("shift %g", tl.Shift)
	}
	if n < 2 || len(tl.L) != n || len(tl.M) != n || len(tl.S) != n {
		return bad("inconsistent lengths")
	}
	for i := range n {
		if !isFin(tl.Ages[i]) || !isFin(tl.L[i]) || !(tl.M[i] > 0) || !(tl.S[i] > 0) || !isFin(tl.M[i]) || !isFin(tl.S[i]) {
			return bad("age %g: L %g, M %g, S %g", tl.Ages[i], tl.L[i], tl.M[i], tl.S[i])
		}
		if i > 0 && !(tl.Ages[i] > tl.Ages[i-1]) {
			return bad("ages not increasing at %d", i)
		}
	}
	return nil
}

// tailOf returns the stratum's tail model: the stored one, or for a
// reference built by hand and never prepared, one fitted from its curves
// with the default body (the fit is repeated on every call, so prepare such
// references with Load or Validate-and-save when scoring many values).
func (r *Reference) tailOf(st *Stratum, b *spline.Basis) (*Tail, error) {
	if st.Tail != nil {
		return st.Tail, nil
	}
	lo, hi := st.body()
	tl, err := fitTail(st, b, r.AgeScale, r.Degree, lo, hi)
	if err != nil {
		return nil, fmt.Errorf("stratum %q: %w", st.Name, err)
	}
	return tl, nil
}

// levelsAt writes the grid quantiles of st at age (t = T(age)) into q and
// returns the body limits. With fill, the levels beyond the body are
// replaced by the tail model's quantiles, so q is the reference's
// distribution at the grid taus; without, only the body is meaningful.
func (r *Reference) levelsAt(q []float64, st *Stratum, b *spline.Basis, age, t float64, w []float64, fill bool) (lo, hi int, err error) {
	if err := curveAt(q, st, b, t, w, 0); err != nil {
		return 0, 0, err
	}
	lo, hi = st.body()
	if !fill || (lo == 0 && hi == len(q)-1) {
		return lo, hi, nil
	}
	tl, err := r.tailOf(st, b)
	if err != nil {
		return 0, 0, err
	}
	for k := range q {
		e := lo
		switch {
		case k > hi:
			e = hi
		case k >= lo:
			continue
		}
		if q[k], err = tl.tailValue(age, q[e], st.Taus[e], normZ(st.Taus[k])); err != nil {
			return 0, 0, fmt.Errorf("stratum %q: %w", st.Name, err)
		}
	}
	return lo, hi, nil
}

// levelValue returns the quantile of level tau from the levels q of
// levelsAt (body lo..hi): interpolated linearly in the normal score inside
// the body, from the tail model beyond it.
func (r *Reference) levelValue(st *Stratum, b *spline.Basis, q []float64, lo, hi int, age, tau float64) (float64, error) {
	taus := st.Taus
	if !(tau > 0 && tau < 1) {
		return 0, fmt.Errorf("%w: tau %g not in (0, 1)", ErrTauRange, tau)
	}
	if tau < taus[lo]-tauSlack || tau > taus[hi]+tauSlack {
		e := lo
		if tau > taus[hi] {
			e = hi
		}
		tl, err := r.tailOf(st, b)
		if err != nil {
			return 0, err
		}
		return tl.tailValue(age, q[e], taus[e], normZ(tau))
	}
	tau = min(max(tau, taus[lo]), taus[hi])
	k, u, err := tauBracket(taus[lo:hi+1], tau)
	if err != nil {
		return 0, err
	}
	v := q[lo+k]
	if u != 0 {
		v += u * (q[lo+k+1] - q[lo+k])
	}
	return v, nil
}
