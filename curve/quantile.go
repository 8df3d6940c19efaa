package curve

import (
	"fmt"
	"math"
	"slices"
	"sort"
	"strings"

	"gonum.org/v1/gonum/stat/distuv"

	"growband/spline"
)

// knotSlack is the relative distance (in units of the knot range) by which
// T(AgeMin) or T(AgeMax) may fall outside the knot vector and still be
// evaluated at the nearest end: the fitter and the scorer compute T
// separately, and an ulp of rounding must not turn AgeMax into an error.
const knotSlack = 1e-12

// monoSlack is the relative amount (in units of the largest coefficient
// magnitude of the stratum) by which a coefficient may decrease from one tau
// to the next and still count as ordered: the solver imposes the order as
// linear constraints, which hold only up to its rounding.
const monoSlack = 1e-9

// tauSlack is the absolute distance within which a chart tau matches a grid
// tau: both are written from the same numbers, so any gap is rounding.
const tauSlack = 1e-12

// scoreMaxDegree is the largest spline degree a reference may use; growth
// references use cubic splines, and the limit keeps bad files from asking
// for absurd workspaces.
const scoreMaxDegree = 10

// Stratum returns the stratum called name. When the reference has a single
// stratum, the name "" also selects it (data without a stratum column). An
// unknown name returns an error wrapping ErrUnknownStratum that lists the
// known names. The result points into r; do not modify it.
func (r *Reference) Stratum(name string) (*Stratum, error) {
	for i := range r.Strata {
		if r.Strata[i].Name == name {
			return &r.Strata[i], nil
		}
	}
	if name == "" && len(r.Strata) == 1 {
		return &r.Strata[0], nil
	}
	known := make([]string, len(r.Strata))
	for i := range r.Strata {
		known[i] = fmt.Sprintf("%q", r.Strata[i].Name)
	}
	return nil, fmt.Errorf("%w %q (known: %s)", ErrUnknownStratum, name, strings.Join(known, ", "))
}

// lookup returns the stratum called name and its basis: the cached one when
// the reference was prepared, otherwise a basis built (and the stratum
// checked) for this call only, so an unprepared reference is still safe for
// concurrent use.
func (r *Reference) lookup(name string) (*Stratum, *spline.Basis, error) {
	st, err := r.Stratum(name)
	if err != nil {
		return nil, nil, err
	}
	if st.LMS != nil { // an LMS table has no basis
		if !st.checked {
			if err := checkLMSStratum(st); err != nil {
				return nil, nil, err
			}
		}
		return st, nil, nil
	}
	if st.basis != nil {
		return st, st.basis, nil
	}
	b, err := checkStratum(st, r.Degree)
	if err != nil {
		return nil, nil, err
	}
	return st, b, nil
}

// transform maps an age to the spline's scale t, refusing ages outside the
// stratum's fitted range: references are never extrapolated in age.
func (r *Reference) transform(st *Stratum, b *spline.Basis, age float64) (float64, error) {
	if !(age >= st.AgeMin && age <= st.AgeMax) { // also catches NaN
		return 0, fmt.Errorf("%w: age %g not in [%g, %g] of stratum %q", ErrAgeRange, age, st.AgeMin, st.AgeMax, st.Name)
	}
	t, err := r.AgeScale.Apply(age)
	if err != nil {
		return 0, fmt.Errorf("%w: age scale: %w", ErrInvalid, err)
	}
	lo, hi := b.Range()
	slack := knotSlack * (hi - lo)
	switch {
	case t >= lo && t <= hi:
	case t >= lo-slack && t < lo:
		t = lo
	case t > hi && t <= hi+slack:
		t = hi
	default:
		return 0, fmt.Errorf("%w: age %g maps to %g outside the knots [%g, %g] of stratum %q", ErrInvalid, age, t, lo, hi, st.Name)
	}
	return t, nil
}

// curveAt writes the fitted quantiles q_k = B(t)'b_k of every grid tau into
// q (len(st.Taus)) using w (len degree+1) as scratch. The order across tau
// holds by construction up to the solver's rounding; a running maximum turns
// any rounding inversion into a tie, so q is non-decreasing.
func curveAt(q []float64, st *Stratum, b *spline.Basis, t float64, w []float64, order int) error {
	first, err := b.Deriv(w, t, order)
	if err != nil {
		return fmt.Errorf("%w: %w", ErrInvalid, err)
	}
	for k, c := range st.Coef {
		s := 0.0
		for j, v := range w {
			s += c[first+j] * v
		}
		q[k] = s
		if order == 0 && k > 0 && q[k] < q[k-1] {
			q[k] = q[k-1]
		}
	}
	return nil
}

// sized returns s with length n, reusing its storage when it can.
func sized[T any](s []T, n int) []T {
	if cap(s) >= n {
		return s[:n]
	}
	return make([]T, n)
}

// normZ is the standard normal quantile Phi^-1(p) for p in (0,1).
func normZ(p float64) float64 { return distuv.UnitNormal.Quantile(p) }

// normP is the standard normal distribution function Phi(z).
func normP(z float64) float64 { return distuv.UnitNormal.CDF(z) }

// Curve writes the fitted quantiles at every grid tau (st.Taus, in order) at
// the given age into dst, resized to len(Taus), and returns it. Errors wrap
// ErrUnknownStratum or ErrAgeRange.
func (r *Reference) Curve(dst []float64, stratum string, age float64) ([]float64, error) {
	st, b, err := r.lookup(stratum)
	if err != nil {
		return dst, err
	}
	if st.LMS != nil {
		dst = sized(dst, len(st.Taus))
		return dst, r.lmsCurveAt(dst, st, age)
	}
	t, err := r.transform(st, b, age)
	if err != nil {
		return dst, err
	}
	dst = sized(dst, len(st.Taus))
	w := make([]float64, r.Degree+1)
	_, _, err = r.levelsAt(dst, st, b, age, t, w, true)
	return dst, err
}

// tauBracket locates tau in the grid for interpolation: it returns k and
// the weight u in [0,1] such that the quantile at tau is
// (1-u)*q_k + u*q_k+1, linear in the normal score z = Phi^-1(tau) between
// the grid's z_k and z_k+1. A grid tau gives u = 0 exactly. tau outside
// [Taus[0], Taus[last]] returns an error wrapping ErrTauRange.
func tauBracket(taus []float64, tau float64) (k int, u float64, err error) {
	n := len(taus)
	if !(tau >= taus[0] && tau <= taus[n-1]) {
		return 0, 0, fmt.Errorf("%w: tau %g not in the fitted grid [%g, %g]", ErrTauRange, tau, taus[0], taus[n-1])
	}
	k = sort.SearchFloat64s(taus, tau) // first taus[k] >= tau
	if taus[k] == tau {
		return k, 0, nil
	}
	k-- // taus[k] < tau < taus[k+1]
	z0, z1 := normZ(taus[k]), normZ(taus[k+1])
	return k, (normZ(tau) - z0) / (z1 - z0), nil
}

// Quantile returns the fitted quantile of level tau at the given age. A tau
// of the grid is read from its curve; a tau between two grid taus is
// interpolated the way Score places a measurement, linearly in the normal
// score z = Phi^-1(tau) between the neighbouring fitted quantiles, so that
// Score(Quantile(tau)) gives back tau. Outside the grid's tau range the
// error wraps ErrTauRange (tables are not extrapolated, although Score
// extrapolates measurements); ages outside the stratum's range wrap
// ErrAgeRange.
func (r *Reference) Quantile(stratum string, age, tau float64) (float64, error) {
	return r.quantile(stratum, age, tau, 0)
}

// Velocity returns dQ_tau/dage, the slope of the fitted centile curve (the
// rate of change of the quantile per age unit) at the given age. It is not
// a velocity centile: the tau-quantile of children's growth rates needs
// repeated measurements of the same children and is usually much wider. It
// is computed by the chain rule through the age scale,
// dQ/dage = dQ/dt * dt/dage, with dQ/dt the exact derivative of the spline
// (at a knot of a spline that is not continuously differentiable there, the
// derivative of the span to the right). tau and age are treated as in
// Quantile; for a tau between grid taus the interpolation weight depends on
// tau only, so the velocity is the same weighted mean of the neighbouring
// curves' velocities.
func (r *Reference) Velocity(stratum string, age, tau float64) (float64, error) {
	return r.quantile(stratum, age, tau, 1)
}

func (r *Reference) quantile(stratum string, age, tau float64, order int) (float64, error) {
	st, b, err := r.lookup(stratum)
	if err != nil {
		return 0, err
	}
	if st.LMS != nil {
		return r.lmsQuantile(st, age, tau, order)
	}
	t, err := r.transform(st, b, age)
	if err != nil {
		return 0, err
	}
	var buf [scoreMaxDegree + 1]float64
	w := buf[:r.Degree+1]
	q := make([]float64, len(st.Taus))
	lo, hi, err := r.levelsAt(q, st, b, age, t, w, false)
	if err != nil {
		return 0, err
	}
	if order == 0 {
		return r.levelValue(st, b, q, lo, hi, age, tau)
	}
	d, err := ageSlope(r.AgeScale, st.AgeMin, st.AgeMax, age)
	if err != nil {
		return 0, fmt.Errorf("%w: age scale: %w", ErrInvalid, err)
	}
	if tau < st.Taus[lo]-tauSlack || tau > st.Taus[hi]+tauSlack {
		// Beyond the body the quantile follows the tail model, whose
		// parameters are tabulated in age: differentiate numerically.
		return r.ageDerivative(stratum, st, age, tau)
	}
	k, u, err := tauBracket(st.Taus[lo:hi+1], min(max(tau, st.Taus[lo]), st.Taus[hi]))
	if err != nil {
		return 0, err
	}
	if err := curveAt(q, st, b, t, w, 1); err != nil {
		return 0, err
	}
	v := q[lo+k]
	if u != 0 {
		v += u * (q[lo+k+1] - q[lo+k])
	}
	return v * d, nil
}

// ageDerivative returns dQ_tau/dage by a central difference quotient (one
// sided at the ends of the age range) of step slopeStep times the range.
func (r *Reference) ageDerivative(stratum string, st *Stratum, age, tau float64) (float64, error) {
	h := slopeStep * (st.AgeMax - st.AgeMin)
	a0, a1 := max(age-h, st.AgeMin), min(age+h, st.AgeMax)
	q0, err := r.quantile(stratum, a0, tau, 0)
	if err != nil {
		return 0, err
	}
	q1, err := r.quantile(stratum, a1, tau, 0)
	if err != nil {
		return 0, err
	}
	return (q1 - q0) / (a1 - a0), nil
}

// slopeStep is the step, as a fraction of the stratum's age range, of the
// difference quotients in ageSlope: small enough that the O(h^4) error of the
// extrapolated quotient is negligible for the smooth age scales, large
// enough that rounding (about eps/h relative) is too.
const slopeStep = 1e-4

// ageSlope returns dT/dage of the age scale at age in [lo, hi] from
// difference quotients of AgeScale.Apply with Richardson extrapolation
// (central inside the range, second-order one-sided near its ends, so T is
// never evaluated outside the fitted ages). It uses Apply rather than a
// second copy of each transform's formula so the two can never disagree.
//
// References:
//   - Richardson L F (1911). Philosophical Transactions of the Royal Society
//     A 210, 307–357.
func ageSlope(s AgeScale, lo, hi, age float64) (float64, error) {
	h := slopeStep * (hi - lo)
	var err error
	f := func(a float64) float64 {
		v, e := s.Apply(a)
		if e != nil && err == nil {
			err = e
		}
		return v
	}
	var d func(h float64) float64
	switch {
	case age-h >= lo && age+h <= hi:
		d = func(h float64) float64 { return (f(age+h) - f(age-h)) / (2 * h) }
	case age+2*h <= hi:
		d = func(h float64) float64 { return (-3*f(age) + 4*f(age+h) - f(age+2*h)) / (2 * h) }
	default:
		d = func(h float64) float64 { return (3*f(age) - 4*f(age-h) + f(age-2*h)) / (2 * h) }
	}
	// Both quotients have an error series in h^2, h^3, ...; combining the
	// steps h and h/2 cancels the h^2 term.
	v := (4*d(h/2) - d(h)) / 3
	return v, err
}

// CentileTable holds fitted quantiles on an age grid: Values[i][j] is the
// quantile of level Taus[j] at Ages[i].
type CentileTable struct {
	Stratum string
	Measure string
	Unit    string
	AgeUnit string
	Ages    []float64
	Taus    []float64
	Values  [][]float64
}

// Table returns the fitted quantiles of the given taus (nil means the
// stratum's chart centiles) at each age, for centile tables. Each tau is
// treated as in Quantile. Errors wrap ErrUnknownStratum, ErrAgeRange (any
// age outside the stratum's range; nothing is extrapolated), ErrTauRange, or
// ErrData when ages is empty.
func (r *Reference) Table(stratum string, ages, taus []float64) (*CentileTable, error) {
	st, b, err := r.lookup(stratum)
	if err != nil {
		return nil, err
	}
	if len(ages) == 0 {
		return nil, fmt.Errorf("%w: no ages for the table", ErrData)
	}
	if taus == nil {
		taus = st.Chart
	}
	if st.LMS != nil {
		return r.lmsTable(st, ages, taus)
	}
	for _, tau := range taus {
		if !(tau > 0 && tau < 1) {
			return nil, fmt.Errorf("%w: tau %g not in (0, 1)", ErrTauRange, tau)
		}
	}
	tab := &CentileTable{
		Stratum: st.Name, Measure: r.Measure, Unit: r.Unit, AgeUnit: r.AgeUnit,
		Ages: slices.Clone(ages), Taus: slices.Clone(taus),
		Values: make([][]float64, len(ages)),
	}
	q := make([]float64, len(st.Taus))
	w := make([]float64, r.Degree+1)
	for i, age := range ages {
		t, err := r.transform(st, b, age)
		if err != nil {
			return nil, err
		}
		lo, hi, err := r.levelsAt(q, st, b, age, t, w, false)
		if err != nil {
			return nil, err
		}
		row := make([]float64, len(taus))
		for j, tau := range taus {
			if row[j], err = r.levelValue(st, b, q, lo, hi, age, tau); err != nil {
				return nil, err
			}
		}
		tab.Values[i] = row
	}
	return tab, nil
}

// Validate checks that r is a usable reference: at least one stratum, unique
// stratum names, a spline degree in [0, 10], an age scale that accepts the
// fitted age range, and for every stratum finite ages with AgeMin < AgeMax,
// a clamped non-decreasing knot vector consistent with the degree, at least
// two taus strictly increasing in (0,1), one coefficient vector per tau of
// the basis length, coefficients ordered across tau (up to rounding), chart
// taus taken from the grid, and finite, consistent flags and bands. The
// error wraps ErrInvalid and names the stratum and field. Validate does not
// check Format and Version (Load does) and does not modify r.
func (r *Reference) Validate() error {
	if r.Degree < 0 || r.Degree > scoreMaxDegree {
		return fmt.Errorf("%w: degree %d not in [0, %d]", ErrInvalid, r.Degree, scoreMaxDegree)
	}
	if len(r.Strata) == 0 {
		return fmt.Errorf("%w: no strata", ErrInvalid)
	}
	if !isFin(r.AgeScale.Shift) || !isFin(r.AgeScale.Power) {
		return fmt.Errorf("%w: age scale shift %g, power %g", ErrInvalid, r.AgeScale.Shift, r.AgeScale.Power)
	}
	if r.Tails != "" && r.Tails != TailsPlain && r.Tails != TailsRestricted {
		return fmt.Errorf("%w: tails %q, want %q or %q", ErrInvalid, r.Tails, TailsPlain, TailsRestricted)
	}
	seen := make(map[string]bool, len(r.Strata))
	for i := range r.Strata {
		st := &r.Strata[i]
		if seen[st.Name] {
			return fmt.Errorf("%w: stratum %q appears twice", ErrInvalid, st.Name)
		}
		seen[st.Name] = true
		if st.LMS != nil {
			if err := checkLMSStratum(st); err != nil {
				return err
			}
			continue
		}
		b, err := checkStratum(st, r.Degree)
		if err != nil {
			return err
		}
		if _, err := r.transform(st, b, st.AgeMin); err != nil {
			return err
		}
		if _, err := r.transform(st, b, st.AgeMax); err != nil {
			return err
		}
		if st.Conditional != nil {
			if err := st.Conditional.check(st.Name); err != nil {
				return err
			}
		}
	}
	return nil
}

// ready validates r and caches each stratum's basis. It must run before r
// is shared between goroutines (Load calls it; so may Fit).
func (r *Reference) ready() error {
	if err := r.Validate(); err != nil {
		return err
	}
	for i := range r.Strata {
		st := &r.Strata[i]
		if st.LMS != nil {
			st.checked = true
			continue
		}
		b, err := spline.New(st.Knots, r.Degree)
		if err != nil { // Validate built the same basis
			return fmt.Errorf("%w: stratum %q: %w", ErrInvalid, st.Name, err)
		}
		if st.Tail == nil { // a file of version 1: fit the tail model once
			if st.Tail, err = r.tailOf(st, b); err != nil {
				return fmt.Errorf("%w: %w", ErrInvalid, err)
			}
		}
		st.basis = b
	}
	return nil
}

// checkStratum validates one stratum (everything but the age scale) and
// returns its basis.
func checkStratum(st *Stratum, degree int) (*spline.Basis, error) {
	bad := func(format string, a ...any) error {
		return fmt.Errorf("%w: stratum %q: %s", ErrInvalid, st.Name, fmt.Sprintf(format, a...))
	}
	if degree < 0 || degree > scoreMaxDegree {
		return nil, bad("degree %d not in [0, %d]", degree, scoreMaxDegree)
	}
	if st.N < 0 {
		return nil, bad("negative row count %d", st.N)
	}
	if !isFin(st.AgeMin) || !isFin(st.AgeMax) || !(st.AgeMin < st.AgeMax) {
		return nil, bad("age range [%g, %g] is not finite with age_min < age_max", st.AgeMin, st.AgeMax)
	}
	b, err := spline.New(st.Knots, degree)
	if err != nil {
		return nil, bad("knots: %v", err)
	}
	if len(st.Taus) < 2 {
		return nil, bad("%d taus, need at least 2", len(st.Taus))
	}
	for k, tau := range st.Taus {
		if !(tau > 0 && tau < 1) {
			return nil, bad("tau %d is %g, not in (0,1)", k, tau)
		}
		if k > 0 && !(tau > st.Taus[k-1]) {
			return nil, bad("taus not strictly increasing at index %d (%g after %g)", k, tau, st.Taus[k-1])
		}
	}
	if len(st.Coef) != len(st.Taus) {
		return nil, bad("%d coefficient vectors for %d taus", len(st.Coef), len(st.Taus))
	}
	scale := 0.0
	for k, c := range st.Coef {
		if len(c) != b.Len() {
			return nil, bad("tau %g has %d coefficients, the basis has %d", st.Taus[k], len(c), b.Len())
		}
		for j, v := range c {
			if !isFin(v) {
				return nil, bad("coefficient %d of tau %g is %g", j, st.Taus[k], v)
			}
			scale = max(scale, math.Abs(v))
		}
	}
	slack := monoSlack * scale
	for k := 1; k < len(st.Coef); k++ {
		for j, v := range st.Coef[k] {
			if v < st.Coef[k-1][j]-slack {
				return nil, bad("coefficient %d decreases from tau %g (%g) to tau %g (%g)", j, st.Taus[k-1], st.Coef[k-1][j], st.Taus[k], v)
			}
		}
	}
	for _, c := range st.Chart {
		if gridIndex(st.Taus, c) < 0 {
			return nil, bad("chart tau %g is not in the tau grid", c)
		}
	}
	for i, f := range st.Flags {
		if !(f.Tau > 0 && f.Tau < 1) || !isFin(f.AgeLo) || !isFin(f.AgeHi) || !(f.AgeLo <= f.AgeHi) || !isFin(f.Expected) {
			return nil, bad("flag %d (tau %g, ages [%g, %g), expected %g) is inconsistent", i, f.Tau, f.AgeLo, f.AgeHi, f.Expected)
		}
		if f.Action != "flagged" && f.Action != "dropped" {
			return nil, bad("flag %d has action %q, want \"flagged\" or \"dropped\"", i, f.Action)
		}
	}
	for i, bd := range st.Bands {
		n := len(bd.Ages)
		if !(bd.Tau > 0 && bd.Tau < 1) || len(bd.Lo) != n || len(bd.Hi) != n || len(bd.BiasToSE) != n {
			return nil, bad("band %d (tau %g) has inconsistent lengths or tau", i, bd.Tau)
		}
		for _, s := range [][]float64{bd.Ages, bd.Lo, bd.Hi, bd.BiasToSE} {
			for _, v := range s {
				if !isFin(v) {
					return nil, bad("band %d (tau %g) holds %g", i, bd.Tau, v)
				}
			}
		}
	}
	if st.Tail != nil {
		if err := checkTail(st); err != nil {
			return nil, err
		}
	}
	sm := st.Smoothness
	if !isFin(sm.Lambda) || !isFin(sm.Score) {
		return nil, bad("smoothness lambda %g, score %g", sm.Lambda, sm.Score)
	}
	return b, nil
}

// gridIndex returns the index of the grid tau within tauSlack of tau, or -1.
func gridIndex(taus []float64, tau float64) int {
	k := sort.SearchFloat64s(taus, tau-tauSlack)
	if k < len(taus) && math.Abs(taus[k]-tau) <= tauSlack {
		return k
	}
	return -1
}

func isFin(v float64) bool { return !math.IsNaN(v) && !math.IsInf(v, 0) }
