package curve

import (
	"errors"
	"math"
	"strings"
	"sync"
	"testing"

	"gonum.org/v1/gonum/stat/distuv"
)

// Hand-built references for the scoring tests. B-splines are non-negative
// and sum to one (partition of unity, an exact identity), so curves whose
// coefficients are all equal are constant in age; and a clamped spline whose
// coefficients are a linear function evaluated at the Greville abscissae
// xi_j = (t_j+1 + ... + t_j+k)/k is that linear function (Marsden's identity,
// de Boor 1978). Both give references with exactly known quantiles.

// testTaus is a dense grid like a fitted reference's: 0.01, 0.02, ..., 0.99
// plus the chart tails 0.005 and 0.995 (our choice of test grid).
func testTaus() []float64 {
	taus := []float64{0.005}
	for k := 1; k <= 99; k++ {
		taus = append(taus, float64(k)/100)
	}
	return append(taus, 0.995)
}

// testChart is the chart centile set 3, 10, 25, 50, 75, 90, 97 (common
// practice for growth charts) as taus.
var testChart = []float64{0.03, 0.10, 0.25, 0.50, 0.75, 0.90, 0.97}

// clampedKnots returns lo, hi each repeated degree+1 times around interior.
func clampedKnots(lo, hi float64, interior []float64, degree int) []float64 {
	var t []float64
	for range degree + 1 {
		t = append(t, lo)
	}
	t = append(t, interior...)
	for range degree + 1 {
		t = append(t, hi)
	}
	return t
}

// greville returns the Greville abscissae of the knot vector t for degree k.
func greville(t []float64, k int) []float64 {
	n := len(t) - k - 1
	xi := make([]float64, n)
	for j := range xi {
		if k == 0 {
			xi[j] = t[j]
			continue
		}
		s := 0.0
		for i := 1; i <= k; i++ {
			s += t[j+i]
		}
		xi[j] = s / float64(k)
	}
	return xi
}

// linearStratum returns a stratum on ages [ageMin, ageMax] whose quantile of
// level tau at transformed age t is exactly a + b*t + f(tau).
func linearStratum(name string, scale AgeScale, degree int, ageMin, ageMax float64, interior []float64,
	taus []float64, a, b float64, f func(tau float64) float64) Stratum {
	tMin, err := scale.Apply(ageMin)
	if err != nil {
		panic(err)
	}
	tMax, err := scale.Apply(ageMax)
	if err != nil {
		panic(err)
	}
	knots := clampedKnots(tMin, tMax, interior, degree)
	xi := greville(knots, degree)
	coef := make([][]float64, len(taus))
	for k, tau := range taus {
		c := make([]float64, len(xi))
		for j, x := range xi {
			c[j] = a + b*x + f(tau)
		}
		coef[k] = c
	}
	return Stratum{
		Name: name, N: 1000, AgeMin: ageMin, AgeMax: ageMax, Knots: knots,
		Taus: append([]float64(nil), taus...), Coef: coef, Chart: testChart,
		Smoothness: Smoothness{InteriorKnots: len(interior), Criterion: "fixed"},
	}
}

// normalRef returns a one-stratum cubic reference on ages [0, 10] whose
// quantiles are those of N(mean, sd) at every age.
func normalRef(mean, sd float64) *Reference {
	st := linearStratum("", AgeScale{Kind: "identity"}, 3, 0, 10, []float64{2.5, 5, 7.5}, testTaus(), mean, 0,
		func(tau float64) float64 { return sd * distuv.UnitNormal.Quantile(tau) })
	return (&Reference{Format: FormatName, Version: FormatVersion, Measure: "weight", Unit: "kg", AgeUnit: "years",
		AgeScale: AgeScale{Kind: "identity"}, Degree: 3, Caution: Caution, Strata: []Stratum{st}}).withTails()
}

// twoStrata returns a cubic reference on a log age scale with strata "F"
// and "M" whose median rises linearly in log(age+1) and whose spread is
// normal (F) or log-normal-like (M, exp of a normal quantile).
func twoStrata() *Reference {
	scale := AgeScale{Kind: "log", Shift: 1}
	taus := testTaus()
	f := linearStratum("F", scale, 3, 0, 24, []float64{0.8, 1.6, 2.4}, taus, 3.2, 2.1,
		func(tau float64) float64 { return 1.1 * distuv.UnitNormal.Quantile(tau) })
	m := linearStratum("M", scale, 3, 0.5, 36, []float64{1.5, 2.5}, taus, 3.5, 2.3,
		func(tau float64) float64 { return math.Exp(0.3 * distuv.UnitNormal.Quantile(tau)) })
	return (&Reference{Format: FormatName, Version: FormatVersion, Measure: "weight", Unit: "kg", AgeUnit: "months",
		AgeScale: scale, Degree: 3, Caution: Caution, Strata: []Stratum{f, m}}).withTails()
}

// near reports |got-want| <= tol*max(1, |want|).
func near(got, want, tol float64) bool {
	return math.Abs(got-want) <= tol*math.Max(1, math.Abs(want))
}

func TestStratumLookup(t *testing.T) {
	r := twoStrata()
	st, err := r.Stratum("M")
	if err != nil || st.Name != "M" {
		t.Fatalf("Stratum(M) = %v, %v", st, err)
	}
	_, err = r.Stratum("X")
	if !errors.Is(err, ErrUnknownStratum) {
		t.Fatalf("Stratum(X) error %v, want ErrUnknownStratum", err)
	}
	if !strings.Contains(err.Error(), `"F"`) || !strings.Contains(err.Error(), `"M"`) {
		t.Errorf("error %q does not list the known strata", err)
	}
	if _, err := r.Stratum(""); !errors.Is(err, ErrUnknownStratum) {
		t.Errorf(`Stratum("") with two strata: %v, want ErrUnknownStratum`, err)
	}
	one := normalRef(10, 2)
	one.Strata[0].Name = "all"
	if st, err := one.Stratum(""); err != nil || st.Name != "all" {
		t.Errorf(`Stratum("") of a single stratum = %v, %v`, st, err)
	}
}

func TestQuantileNormal(t *testing.T) {
	const mean, sd = 20, 3 // arbitrary test values
	r := normalRef(mean, sd)
	for _, age := range []float64{0, 0.3, 2.5, 6.1, 10} { // knots, ends and between
		for _, tau := range []float64{0.005, 0.01, 0.03, 0.5, 0.77, 0.995} {
			got, err := r.Quantile("", age, tau)
			if err != nil {
				t.Fatal(err)
			}
			// Grid taus: partition of unity (exact identity), so rounding only.
			if want := mean + sd*distuv.UnitNormal.Quantile(tau); !near(got, want, 1e-13) {
				t.Errorf("Q(age %g, tau %g) = %.15g, want %.15g", age, tau, got, want)
			}
		}
		// Between grid taus the interpolation is linear in z, and the
		// normal quantile is linear in z: exact up to rounding.
		for _, tau := range []float64{0.0071, 0.123, 0.4999, 0.5001, 0.9876, 0.9941} {
			got, err := r.Quantile("", age, tau)
			if err != nil {
				t.Fatal(err)
			}
			if want := mean + sd*distuv.UnitNormal.Quantile(tau); !near(got, want, 1e-12) {
				t.Errorf("Q(age %g, tau %g) = %.15g, want %.15g", age, tau, got, want)
			}
		}
	}
}

// TestQuantileInterpolationBound checks a curve that is not linear in z:
// the quantiles exp(mu + s z) of a log-normal. Linear interpolation of f on
// [z0, z1], h = z1-z0, errs by at most h^2/8 max|f”| (the standard
// interpolation error bound, exact identity); here max f” = s^2 exp(mu+s z1).
func TestQuantileInterpolationBound(t *testing.T) {
	const mu, s = 1.2, 0.4 // arbitrary test values
	st := linearStratum("", AgeScale{}, 1, 0, 1, nil, testTaus(), 0, 0,
		func(tau float64) float64 { return math.Exp(mu + s*distuv.UnitNormal.Quantile(tau)) })
	r := &Reference{Degree: 1, Strata: []Stratum{st}}
	taus := st.Taus
	worst := 0.0
	for k := 0; k+1 < len(taus); k++ {
		z0, z1 := distuv.UnitNormal.Quantile(taus[k]), distuv.UnitNormal.Quantile(taus[k+1])
		h := z1 - z0
		bound := h*h/8*s*s*math.Exp(mu+s*z1) + 1e-12 // + rounding
		for _, u := range []float64{0.1, 0.5, 0.9} {
			tau := distuv.UnitNormal.CDF(z0 + u*h)
			got, err := r.Quantile("", 0.5, tau)
			if err != nil {
				t.Fatal(err)
			}
			want := math.Exp(mu + s*distuv.UnitNormal.Quantile(tau))
			if e := math.Abs(got - want); e > bound {
				t.Errorf("tau %g: error %g exceeds bound %g", tau, e, bound)
			} else {
				worst = max(worst, e/bound)
			}
			// A convex f lies below its chords: interpolation overestimates.
			if got < want-1e-12 {
				t.Errorf("tau %g: %g below the convex curve %g", tau, got, want)
			}
		}
	}
	if worst < 0.1 {
		t.Errorf("largest error is only %.3g of the bound: the test does not probe interpolation", worst)
	}
}

func TestQuantileErrors(t *testing.T) {
	r := twoStrata()
	cases := []struct {
		name     string
		stratum  string
		age, tau float64
		want     error
	}{
		{"below age range", "F", -0.01, 0.5, ErrAgeRange},
		{"above age range", "F", 24.01, 0.5, ErrAgeRange},
		{"stratum's own range", "M", 0.4, 0.5, ErrAgeRange},
		{"NaN age", "F", math.NaN(), 0.5, ErrAgeRange},
		{"tau 0", "F", 5, 0, ErrTauRange},
		{"tau NaN", "F", 5, math.NaN(), ErrTauRange},
		{"unknown stratum", "X", 5, 0.5, ErrUnknownStratum},
	}
	for _, c := range cases {
		if _, err := r.Quantile(c.stratum, c.age, c.tau); !errors.Is(err, c.want) {
			t.Errorf("%s: Quantile error %v, want %v", c.name, err, c.want)
		}
		if _, err := r.Velocity(c.stratum, c.age, c.tau); !errors.Is(err, c.want) {
			t.Errorf("%s: Velocity error %v, want %v", c.name, err, c.want)
		}
	}
	// Beyond the grid the tail model gives the quantile, which scores back
	// its level.
	for _, tau := range []float64{0.0001, 0.001, 0.999, 0.9999} {
		q, err := r.Quantile("F", 5, tau)
		if err != nil {
			t.Fatalf("tau %g: %v", tau, err)
		}
		if s, err := r.Score("F", 5, q); err != nil || !near(s.Centile, 100*tau, 1e-9) {
			t.Errorf("tau %g: quantile %g scores %+v, %v", tau, q, s, err)
		}
	}
	// The ends of the range are inside it.
	for _, age := range []float64{0, 24} {
		if _, err := r.Quantile("F", age, 0.5); err != nil {
			t.Errorf("age %g: %v", age, err)
		}
	}
}

func TestCurveMatchesQuantile(t *testing.T) {
	r := twoStrata()
	var dst []float64
	for _, age := range []float64{0.5, 3, 17.25, 36} {
		var err error
		dst, err = r.Curve(dst, "M", age)
		if err != nil {
			t.Fatal(err)
		}
		st, _ := r.Stratum("M")
		if len(dst) != len(st.Taus) {
			t.Fatalf("Curve has %d values for %d taus", len(dst), len(st.Taus))
		}
		for k, tau := range st.Taus {
			q, err := r.Quantile("M", age, tau)
			if err != nil {
				t.Fatal(err)
			}
			if q != dst[k] {
				t.Errorf("age %g tau %g: Curve %g, Quantile %g", age, tau, dst[k], q)
			}
			if k > 0 && dst[k] < dst[k-1] {
				t.Errorf("age %g: curve decreases at tau %g", age, tau)
			}
			// Marsden's identity: the exact curve is a + b log(age+1) +
			// f(tau) in the body (beyond it the tail model decides).
			want := 3.5 + 2.3*math.Log(age+1) + math.Exp(0.3*distuv.UnitNormal.Quantile(tau))
			if lo, hi := st.body(); k >= lo && k <= hi && !near(dst[k], want, 1e-12) {
				t.Errorf("age %g tau %g: %.15g, want %.15g", age, tau, dst[k], want)
			}
		}
	}
}

func TestVelocity(t *testing.T) {
	r := twoStrata()
	// Q = a + b log(age+1) + f(tau), so dQ/dage = b/(age+1) for every tau
	// (exact derivative); the age scale's slope is a difference quotient,
	// good to about 1e-9 relative at this step (our tolerance).
	for _, c := range []struct {
		stratum string
		b       float64
		age     float64
	}{{"F", 2.1, 0}, {"F", 2.1, 0.0001}, {"F", 2.1, 3.7}, {"F", 2.1, 24}, {"M", 2.3, 0.5}, {"M", 2.3, 12}, {"M", 2.3, 36}} {
		for _, tau := range []float64{0.1, 0.5, 0.555, 0.9} {
			got, err := r.Velocity(c.stratum, c.age, tau)
			if err != nil {
				t.Fatal(err)
			}
			if want := c.b / (c.age + 1); !near(got, want, 1e-8) {
				t.Errorf("%s age %g tau %g: velocity %.12g, want %.12g", c.stratum, c.age, tau, got, want)
			}
		}
		// Beyond the body the tail model's L, M and S are linear between
		// tabulated ages: the slope is that of the tail's quantile, a
		// difference quotient over the step 1e-4 of the range (1e-6
		// relative: our tolerance for its truncation error).
		for _, tau := range []float64{0.005, 0.995} {
			got, err := r.Velocity(c.stratum, c.age, tau)
			if err != nil {
				t.Fatal(err)
			}
			st, _ := r.Stratum(c.stratum)
			h := 1e-4 * (st.AgeMax - st.AgeMin)
			a0, a1 := max(c.age-h, st.AgeMin), min(c.age+h, st.AgeMax)
			q0, _ := r.Quantile(c.stratum, a0, tau)
			q1, _ := r.Quantile(c.stratum, a1, tau)
			if want := (q1 - q0) / (a1 - a0); !near(got, want, 1e-6) {
				t.Errorf("%s age %g tau %g: tail velocity %.12g, want %.12g", c.stratum, c.age, tau, got, want)
			}
		}
	}
	// Identity scale, constant curves: velocity 0 (exact: the derivative of
	// a constant spline is a sum of coefficient differences, all zero).
	n := normalRef(10, 1)
	if v, err := n.Velocity("", 4, 0.5); err != nil || v != 0 {
		t.Errorf("constant curve velocity %g, %v", v, err)
	}
}

func TestVelocityPowerScale(t *testing.T) {
	// t = age^0.5 and Q = 1 + 2t, so dQ/dage = 1/sqrt(age) (exact derivative).
	scale := AgeScale{Kind: "power", Power: 0.5}
	st := linearStratum("", scale, 3, 1, 16, []float64{2, 3}, testTaus(), 1, 2, func(float64) float64 { return 0 })
	// Spread the taus so the curves are ordered.
	for k := range st.Coef {
		for j := range st.Coef[k] {
			st.Coef[k][j] += distuv.UnitNormal.Quantile(st.Taus[k])
		}
	}
	r := &Reference{AgeScale: scale, Degree: 3, Strata: []Stratum{st}}
	for _, age := range []float64{1, 2, 9, 16} {
		got, err := r.Velocity("", age, 0.5)
		if err != nil {
			t.Fatal(err)
		}
		if want := 1 / math.Sqrt(age); !near(got, want, 1e-8) {
			t.Errorf("age %g: %.12g, want %.12g", age, got, want)
		}
	}
}

func TestTable(t *testing.T) {
	r := twoStrata()
	ages := []float64{0, 6, 12, 24}
	tab, err := r.Table("F", ages, nil)
	if err != nil {
		t.Fatal(err)
	}
	if len(tab.Taus) != len(testChart) || len(tab.Values) != len(ages) || tab.Unit != "kg" || tab.Stratum != "F" {
		t.Fatalf("table shape %+v", tab)
	}
	for i, age := range ages {
		for j, tau := range tab.Taus {
			q, err := r.Quantile("F", age, tau)
			if err != nil {
				t.Fatal(err)
			}
			if tab.Values[i][j] != q {
				t.Errorf("table[%d][%d] = %g, Quantile %g", i, j, tab.Values[i][j], q)
			}
		}
	}
	tab, err = r.Table("F", ages, []float64{0.0123, 0.5})
	if err != nil || tab.Values[1][1] != mustQ(t, r, "F", 6, 0.5) || tab.Values[2][0] != mustQ(t, r, "F", 12, 0.0123) {
		t.Errorf("explicit taus: %v, %v", tab, err)
	}
	if _, err := r.Table("F", []float64{1, 25}, nil); !errors.Is(err, ErrAgeRange) {
		t.Errorf("age beyond range: %v", err)
	}
	if _, err := r.Table("F", nil, nil); !errors.Is(err, ErrData) {
		t.Errorf("no ages: %v", err)
	}
	if _, err := r.Table("F", ages, []float64{0.0001}); !errors.Is(err, ErrTauRange) {
		t.Errorf("tau beyond grid: %v", err)
	}
}

func mustQ(t *testing.T, r *Reference, stratum string, age, tau float64) float64 {
	t.Helper()
	q, err := r.Quantile(stratum, age, tau)
	if err != nil {
		t.Fatal(err)
	}
	return q
}

func TestValidate(t *testing.T) {
	if err := twoStrata().Validate(); err != nil {
		t.Fatalf("valid reference: %v", err)
	}
	cases := []struct {
		name   string
		mutate func(r *Reference)
	}{
		{"no strata", func(r *Reference) { r.Strata = nil }},
		{"degree", func(r *Reference) { r.Degree = -1 }},
		{"degree vs knots", func(r *Reference) { r.Degree = 2 }},
		{"duplicate stratum", func(r *Reference) { r.Strata[1].Name = "F" }},
		{"age scale kind", func(r *Reference) { r.AgeScale.Kind = "cube" }},
		{"age scale domain", func(r *Reference) { r.Strata[0].AgeMin = -2 }},
		{"age range order", func(r *Reference) { r.Strata[0].AgeMin = 30 }},
		{"age NaN", func(r *Reference) { r.Strata[0].AgeMax = math.NaN() }},
		{"ages beyond knots", func(r *Reference) { r.Strata[0].AgeMax = 30 }},
		{"knots decrease", func(r *Reference) { k := r.Strata[0].Knots; k[5], k[6] = k[6], k[5] }},
		{"knots short", func(r *Reference) { r.Strata[0].Knots = r.Strata[0].Knots[:7] }},
		{"one tau", func(r *Reference) { r.Strata[0].Taus = r.Strata[0].Taus[:1]; r.Strata[0].Coef = r.Strata[0].Coef[:1] }},
		{"taus unordered", func(r *Reference) { r.Strata[0].Taus[3] = r.Strata[0].Taus[2] }},
		{"tau 1", func(r *Reference) { n := len(r.Strata[0].Taus); r.Strata[0].Taus[n-1] = 1 }},
		{"coef count", func(r *Reference) { r.Strata[0].Coef = r.Strata[0].Coef[1:] }},
		{"coef length", func(r *Reference) { r.Strata[0].Coef[4] = r.Strata[0].Coef[4][1:] }},
		{"coef NaN", func(r *Reference) { r.Strata[0].Coef[4][2] = math.NaN() }},
		{"coef crossing", func(r *Reference) { r.Strata[0].Coef[50][2] = r.Strata[0].Coef[49][2] - 1e-3 }},
		{"chart tau", func(r *Reference) { r.Strata[0].Chart = []float64{0.333} }},
		{"flag action", func(r *Reference) { r.Strata[0].Flags = []Flag{{Tau: 0.01, AgeLo: 0, AgeHi: 1, Action: "ignored"}} }},
		{"band lengths", func(r *Reference) { r.Strata[0].Bands = []Band{{Tau: 0.5, Ages: []float64{1}}} }},
		{"smoothness Inf", func(r *Reference) { r.Strata[0].Smoothness.Score = math.Inf(1) }},
	}
	for _, c := range cases {
		r := twoStrata()
		c.mutate(r)
		err := r.Validate()
		if !errors.Is(err, ErrInvalid) {
			t.Errorf("%s: Validate = %v, want ErrInvalid", c.name, err)
		}
		// Look-ups on an unprepared reference check the stratum: whatever
		// the fault, they return an error or a score, never panic.
		_, _ = r.Score("F", 1, 10)
		_, _ = r.Quantile("M", 1, 0.5)
	}
	// Rounding-sized crossings (the solver's) are accepted, and scoring
	// turns them into ties.
	r := twoStrata()
	r.Strata[0].Coef[50][2] = r.Strata[0].Coef[49][2] - 1e-12
	if err := r.Validate(); err != nil {
		t.Errorf("rounding-sized crossing refused: %v", err)
	}
}

func TestConcurrentLookups(t *testing.T) {
	r := twoStrata()
	if err := r.ready(); err != nil {
		t.Fatal(err)
	}
	plain := twoStrata() // unprepared: builds a basis per call
	want, err := r.Score("M", 7, 8)
	if err != nil {
		t.Fatal(err)
	}
	var wg sync.WaitGroup
	errs := make(chan string, 16)
	for g := range 8 {
		wg.Go(func() {
			ref := r
			if g%2 == 1 {
				ref = plain
			}
			for range 200 {
				s, err := ref.Score("M", 7, 8)
				if err != nil || s != want {
					errs <- "concurrent score differs"
					return
				}
			}
		})
	}
	wg.Wait()
	close(errs)
	for e := range errs {
		t.Fatal(e)
	}
}

// withTails fits the tail model of every stratum of a reference built by
// hand, as Fit and Load do, and returns r.
func (r *Reference) withTails() *Reference {
	for i := range r.Strata {
		st := &r.Strata[i]
		if st.LMS != nil || st.Tail != nil {
			continue
		}
		b, err := checkStratum(st, r.Degree)
		if err != nil {
			panic(err)
		}
		if st.Tail, err = r.tailOf(st, b); err != nil {
			panic(err)
		}
	}
	return r
}
