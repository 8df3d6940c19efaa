package curve

import (
	"errors"
	"math"
	"math/rand/v2"
	"slices"
	"strings"
	"testing"
)

// heightModel is the stated truth of the screen test: a height-like
// measure in years, normal at every age with median
// M(a) = 50 + 113 (1 - exp(-a/4)) cm for boys and 0.96 M(a) for girls, and
// SD 0.04 M. Invented for the test; only its shape (fast early growth that
// levels off) matters.
func heightModel(a float64, female bool) (m, s float64) {
	m = 50 + 113*(1-math.Exp(-a/4))
	if female {
		m *= 0.96
	}
	return m, 0.04 * m
}

// TestBuildScreenPlanted simulates a 0–19 year height survey from
// heightModel (n per sex below), plants ten gross errors (girls of 13–15
// years entered at 81–87 cm, true z about -7 to -12) and a newborn at age 0
// with true z +1.6, and runs Build with the default screen. Every planted
// error must be excluded as implausible, the newborn kept, and no row with
// |true z| < 4 excluded.
func TestBuildScreenPlanted(t *testing.T) {
	perSex := 3000
	if testing.Short() {
		perSex = 1500
	}
	rng := rand.New(rand.NewPCG(2026, 10))
	d := &Data{}
	var trueZ []float64
	add := func(a, y float64, female bool, z float64) {
		d.Age = append(d.Age, a)
		d.Value = append(d.Value, y)
		name := "male"
		if female {
			name = "female"
		}
		d.Stratum = append(d.Stratum, name)
		trueZ = append(trueZ, z)
	}
	for _, female := range []bool{false, true} {
		for range perSex {
			a := 19 * rng.Float64()
			z := rng.NormFloat64()
			m, s := heightModel(a, female)
			add(a, m+z*s, female, z)
		}
	}
	first := len(d.Age)
	for k := range 10 {
		a := 13 + 2*rng.Float64()
		y := 81 + 6*float64(k)/9
		m, s := heightModel(a, true)
		add(a, y, true, (y-m)/s)
	}
	planted := len(d.Age)
	m0, s0 := heightModel(0, true)
	add(0, m0+1.6*s0, true, 1.6)

	res, err := Build(d, &BuildSettings{Fit: Settings{Centiles: []float64{3, 50, 97}}, AcceptEdges: true})
	if err != nil {
		t.Fatal(err)
	}
	out := map[int]Exclusion{}
	for _, e := range res.Excluded {
		out[e.Row] = e
		if e.Reason != ExcludedImplausible {
			t.Errorf("row %d excluded for %q", e.Row, e.Reason)
		}
	}
	for i := first; i < planted; i++ {
		if _, ok := out[i]; !ok {
			t.Errorf("planted error %d (age %.2f, %.1f cm, true z %.1f) kept", i, d.Age[i], d.Value[i], trueZ[i])
		}
	}
	if e, ok := out[planted]; ok {
		t.Errorf("newborn with true z +1.6 excluded (%s)", e.Detail)
	}
	for i, e := range out {
		if i < first && math.Abs(trueZ[i]) < 4 {
			t.Errorf("row %d with true z %.2f excluded (%s)", i, trueZ[i], e.Detail)
		}
	}
	if len(res.Used)+len(res.Excluded) != len(d.Age) {
		t.Errorf("%d used + %d excluded != %d rows", len(res.Used), len(res.Excluded), len(d.Age))
	}
	t.Logf("excluded %d rows, planted 10", len(res.Excluded))
}

// TestScreenScore checks the piecewise rule of RobustZ against exact
// values: at a normal's screening quantiles (q_k = z_k) every value scores
// itself, inside and beyond the outer bands.
func TestScreenScore(t *testing.T) {
	q := slices.Clone(screenZ)
	for _, y := range []float64{-9, -3, -1.2815515655446004, -0.3, 0, 0.5, 1.2815515655446004, 2, 7} {
		if got := screenScore(q, y); math.Abs(got-y) > 1e-12 {
			t.Errorf("score(%v) = %v", y, got)
		}
	}
	tied := []float64{1, 2, 2, 2, 3}
	if got := screenScore(tied, 2); got != 0 {
		t.Errorf("tied middle scores %v, want 0", got)
	}
	if got := screenScore([]float64{1, 1, 2, 3, 3}, 4); !math.IsInf(got, 1) {
		t.Errorf("beyond a tied outer band scores %v, want +Inf", got)
	}
}

// TestAgeRange fits with a stated age range wider than the rows: the
// curves reach both ends and score there; Build excludes a row outside the
// range with its reason; Fit refuses it.
func TestAgeRange(t *testing.T) {
	d := lineData(800, 5)
	for i := range d.Age {
		d.Age[i] = 0.5 + 0.9*d.Age[i] // 0.5 to 9.5
	}
	s := &Settings{Knots: 2, AgeRange: [2]float64{0, 10}}
	ref := mustFit(t, d, s)
	st := &ref.Strata[0]
	if st.AgeMin != 0 || st.AgeMax != 10 {
		t.Errorf("fitted range [%v, %v], want the stated [0, 10]", st.AgeMin, st.AgeMax)
	}
	for _, a := range []float64{0, 10} {
		if _, err := ref.Score("", a, 15); err != nil {
			t.Errorf("age %v at the end of the stated range not scored: %v", a, err)
		}
	}
	if _, err := ref.Score("", 10.01, 15); !errors.Is(err, ErrAgeRange) {
		t.Errorf("age beyond the stated range: %v", err)
	}
	d.Age = append(d.Age, 11)
	d.Value = append(d.Value, 30)
	if _, err := Fit(d, s); !errors.Is(err, ErrData) || !strings.Contains(err.Error(), "row 801") {
		t.Errorf("Fit with a row outside the range: %v", err)
	}
	res, err := Build(d, &BuildSettings{Fit: *s, AcceptEdges: true})
	if err != nil {
		t.Fatal(err)
	}
	if ex := res.Excluded; len(ex) != 1 || ex[0].Row != 800 || ex[0].Reason != ExcludedAgeRange || ex[0].Detail != "age 11 outside [0, 10]" {
		t.Errorf("Build exclusions %+v", ex)
	}
}

// TestCheckEdges fits straight-line data (lineData: no ties, no bends by
// construction) and finds no edge problem; then it damages the fitted
// coefficients three ways and each check must report its problem.
func TestCheckEdges(t *testing.T) {
	d := lineData(3000, 9)
	fresh := func() *Reference { return mustFit(t, d, &Settings{Knots: 3}) }
	ref := fresh()
	if p, err := CheckEdges(ref, d); err != nil || len(p) != 0 {
		t.Fatalf("clean fit: problems %v, error %v", p, err)
	}
	// A clean fit where growth bends fast at the end (a simulation from a
	// stated model: normal, median 50 + 30 (1 - exp(-a/0.9)) + 5a cm, SD 2,
	// ages 0–10 years, shaped like length after birth): its curves are far
	// from straight across the end windows, and the data's straight lines
	// are not their chords, yet nothing is wrong. The bend check compares
	// the reference's own quantile-regression line with the data's, so it
	// reports nothing; the former check, the curve's chord against the data
	// line, reported the 90th centile at birth 4.7 SE off on these data.
	rng := rand.New(rand.NewPCG(5, 5))
	bent := &Data{}
	for range 12000 {
		a := 10 * rng.Float64()
		bent.Age = append(bent.Age, a)
		bent.Value = append(bent.Value, 50+30*(1-math.Exp(-a/0.9))+5*a+2*rng.NormFloat64())
	}
	if p, err := CheckEdges(mustFit(t, bent, &Settings{Knots: 10}), bent); err != nil || len(p) != 0 {
		t.Errorf("clean fit of fast-bending growth: problems %v, error %v", p, err)
	}
	kinds := func(p []EdgeProblem) string {
		var k []string
		for _, x := range p {
			if !slices.Contains(k, x.Kind) {
				k = append(k, x.Kind)
			}
		}
		slices.Sort(k)
		return strings.Join(k, ",")
	}

	// Tie: every curve from the 3rd to the 10th centile takes the 10th's
	// coefficients (order across tau is kept).
	ref = fresh()
	st := &ref.Strata[0]
	i10 := slices.Index(st.Taus, 0.10)
	for k, tau := range st.Taus {
		if tau >= 0.03 && tau < 0.10 {
			st.Coef[k] = slices.Clone(st.Coef[i10])
		}
	}
	// (The 3rd centile now runs at the 10th's level, so the bend check may
	// report it too.)
	if p, _ := CheckEdges(ref, d); !strings.Contains(kinds(p), "tie") || p[0].Kind != "tie" || p[0].Tau != 0.03 || p[0].Tau2 != 0.10 {
		t.Errorf("tied 3rd and 10th centiles: %v", p)
	}

	// Bend: the last coefficient of every curve raised by 6 (an upward flick
	// at the oldest ages; the data's slope there is 2 per year, the curve's
	// mean slope over the last window becomes about 7).
	ref = fresh()
	st = &ref.Strata[0]
	for k := range st.Coef {
		st.Coef[k][len(st.Coef[k])-1] += 6
	}
	if p, _ := CheckEdges(ref, d); !strings.Contains(kinds(p), "bend") {
		t.Errorf("raised end: %v", p)
	}

	// Hook: the last coefficient lowered by 6 makes the curves fall at the
	// end while the data rise.
	ref = fresh()
	st = &ref.Strata[0]
	for k := range st.Coef {
		st.Coef[k][len(st.Coef[k])-1] -= 6
	}
	if p, _ := CheckEdges(ref, d); !strings.Contains(kinds(p), "hook") {
		t.Errorf("lowered end: %v", p)
	}
}

// TestChooseAgeScale draws weight-like data whose median grows as the
// square root of age, M(a) = 3.3 + 1.6 sqrt(a) kg over 0–60 months, normal
// with SD 0.11 M (an invented truth, steep in early infancy). The identity
// scale has to spend knots on the first months; the automatic choice must
// pick a compressing scale whose chart centiles at 0–3 months are closer
// to the truth than the identity fit's.
func TestChooseAgeScale(t *testing.T) {
	n := 6000
	if testing.Short() {
		n = 3000
	}
	rng := rand.New(rand.NewPCG(77, 3))
	truth := func(a float64) (float64, float64) { m := 3.3 + 1.6*math.Sqrt(a); return m, 0.11 * m }
	d := &Data{}
	for range n {
		a := 60 * rng.Float64()
		m, s := truth(a)
		d.Age = append(d.Age, a)
		d.Value = append(d.Value, m+s*rng.NormFloat64())
	}
	s := &Settings{Centiles: []float64{3, 50, 97}, AgeRange: [2]float64{0, 60}}
	ref, choices, problems, err := ChooseAgeScale(d, s)
	if err != nil {
		t.Fatal(err)
	}
	for _, c := range choices {
		t.Logf("%-16s criterion %.5f problems %d chosen %v %s", c.Scale, c.Score, c.Problems, c.Chosen, c.Thin)
	}
	if len(problems) > 0 {
		t.Errorf("chosen scale has edge problems: %v", problems)
	}
	if ref.AgeScale.Kind == ScaleIdentity {
		t.Fatalf("identity chosen")
	}
	ident := mustFit(t, d, s)
	early := func(r *Reference) float64 {
		e, k := 0.0, 0
		for a := 0.0; a <= 3; a += 0.25 {
			m, sd := truth(a)
			for _, tau := range []float64{0.03, 0.5, 0.97} {
				q, err := r.Quantile("", a, tau)
				if err != nil {
					t.Fatal(err)
				}
				e += math.Abs((q-m)/sd - normZ(tau))
				k++
			}
		}
		return e / float64(k)
	}
	chosen, id := early(ref), early(ident)
	t.Logf("mean |z error| of centiles 3, 50, 97 at 0–3 months: chosen %.3f, identity %.3f", chosen, id)
	if !(chosen < id) {
		t.Errorf("chosen scale %s no better than the identity at 0–3 months (%.3f against %.3f)", ref.AgeScale, chosen, id)
	}
}
