package curve

import (
	"crypto/sha256"
	"encoding/hex"
	"errors"
	"math"
	"math/rand/v2"
	"reflect"
	"slices"
	"strings"
	"testing"

	"growband/spline"
)

// lineData draws n rows of y = 10 + 2a + (1 + 0.2a) e, e ~ N(0,1), a ~ U[0,10]:
// a straight median with a spread that grows with age. Seeded, for property
// tests.
func lineData(n int, seed uint64) *Data {
	rng := rand.New(rand.NewPCG(seed, 1))
	d := &Data{Age: make([]float64, n), Value: make([]float64, n)}
	for i := range n {
		a := 10 * rng.Float64()
		d.Age[i] = a
		d.Value[i] = 10 + 2*a + (1+0.2*a)*rng.NormFloat64()
	}
	return d
}

// curvesAt evaluates every fitted tau curve of st at age with an independent
// basis built from the stored knots.
func curvesAt(t testing.TB, ref *Reference, st *Stratum, b *spline.Basis, age float64) []float64 {
	t.Helper()
	x, err := ref.AgeScale.Apply(age)
	if err != nil {
		t.Fatal(err)
	}
	lo, hi := b.Range()
	x = min(max(x, lo), hi)
	q := make([]float64, len(st.Coef))
	for k, c := range st.Coef {
		if q[k], err = b.Value(c, x); err != nil {
			t.Fatal(err)
		}
	}
	return q
}

func basisOf(t testing.TB, ref *Reference, st *Stratum) *spline.Basis {
	t.Helper()
	b, err := spline.New(st.Knots, ref.Degree)
	if err != nil {
		t.Fatal(err)
	}
	return b
}

func mustFit(t testing.TB, d *Data, s *Settings) *Reference {
	t.Helper()
	ref, err := Fit(d, s)
	if err != nil {
		t.Fatalf("Fit: %v", err)
	}
	return ref
}

func TestAgeScaleApply(t *testing.T) {
	for _, c := range []struct {
		s         AgeScale
		age, want float64
	}{
		{AgeScale{}, 3.5, 3.5},                                      // identity
		{AgeScale{Kind: ScaleIdentity}, -2, -2},                     // identity takes any age
		{AgeScale{Kind: ScaleLog, Shift: 1}, math.E - 1, 1},         // log(e) = 1, exact identity
		{AgeScale{Kind: ScaleLog}, 1, 0},                            // log(1) = 0
		{AgeScale{Kind: ScalePower, Power: 0.5}, 6.25, 2.5},         // sqrt(6.25) = 2.5
		{AgeScale{Kind: ScalePower, Power: 1.0 / 3}, 0, 0},          // 0^p = 0
		{AgeScale{Kind: ScaleLog, Shift: 0.75}, 0.25, 0},            // log(1) = 0
		{AgeScale{Kind: ScalePower, Power: 2}, 3, 9},                // 3^2
		{AgeScale{Kind: ScaleLog, Shift: -1}, 1 + math.E*math.E, 2}, // log(e^2) = 2
	} {
		got, err := c.s.Apply(c.age)
		if err != nil {
			t.Errorf("%+v.Apply(%v): %v", c.s, c.age, err)
			continue
		}
		if math.Abs(got-c.want) > 1e-15*(1+math.Abs(c.want)) { // a few ulps
			t.Errorf("%+v.Apply(%v) = %v, want %v", c.s, c.age, got, c.want)
		}
	}
	for _, c := range []struct {
		s    AgeScale
		age  float64
		want error
	}{
		{AgeScale{Kind: ScaleLog}, 0, ErrAgeDomain},
		{AgeScale{Kind: ScaleLog, Shift: 1}, -1, ErrAgeDomain},
		{AgeScale{Kind: ScalePower, Power: 0.5}, -0.1, ErrAgeDomain},
		{AgeScale{}, math.NaN(), ErrAgeDomain},
		{AgeScale{}, math.Inf(1), ErrAgeDomain},
		{AgeScale{Kind: "cube"}, 1, ErrAgeScale},
		{AgeScale{Kind: ScalePower}, 1, ErrAgeScale},
		{AgeScale{Kind: ScalePower, Power: -1}, 1, ErrAgeScale},
		{AgeScale{Kind: ScaleLog, Shift: math.NaN()}, 1, ErrAgeScale},
		{AgeScale{Shift: 1}, 1, ErrAgeScale},
		{AgeScale{Kind: ScaleLog, Power: 2}, 1, ErrAgeScale},
	} {
		if _, err := c.s.Apply(c.age); !errors.Is(err, c.want) {
			t.Errorf("%+v.Apply(%v) error %v, want %v", c.s, c.age, err, c.want)
		}
	}
}

func TestFitBadData(t *testing.T) {
	good := func() *Data { return lineData(50, 1) }
	nan := math.NaN()
	cases := []struct {
		name string
		d    *Data
		s    *Settings
		want []error
		text string
	}{
		{"nil", nil, nil, []error{ErrData}, "no rows"},
		{"empty", &Data{}, nil, []error{ErrData}, "no rows"},
		{"values", func() *Data { d := good(); d.Value = d.Value[:10]; return d }(), nil, []error{ErrData}, "values"},
		{"weights", func() *Data { d := good(); d.Weight = []float64{1}; return d }(), nil, []error{ErrData}, "weights"},
		{"strata", func() *Data { d := good(); d.Stratum = []string{"a"}; return d }(), nil, []error{ErrData}, "stratum"},
		{"subjects", func() *Data { d := good(); d.Subject = make([]string, 51); return d }(), nil, []error{ErrData}, "subject"},
		{"nan age", func() *Data { d := good(); d.Age[2] = nan; return d }(), nil, []error{ErrData}, "row 3"},
		{"inf value", func() *Data { d := good(); d.Value[6] = math.Inf(-1); return d }(), nil, []error{ErrData}, "row 7"},
		{"zero weight", func() *Data {
			d := good()
			d.Weight = slices.Repeat([]float64{1}, 50)
			d.Weight[4] = 0
			return d
		}(), nil, []error{ErrData}, "row 5"},
		{"negative weight", func() *Data {
			d := good()
			d.Weight = slices.Repeat([]float64{1}, 50)
			d.Weight[49] = -2
			return d
		}(), nil, []error{ErrData}, "row 50"},
		{"nan weight", func() *Data {
			d := good()
			d.Weight = slices.Repeat([]float64{1}, 50)
			d.Weight[0] = nan
			return d
		}(), nil, []error{ErrData}, "row 1"},
		{"log of zero age", func() *Data { d := good(); d.Age[8] = 0; return d }(),
			&Settings{AgeScale: AgeScale{Kind: ScaleLog}}, []error{ErrData, ErrAgeDomain}, "row 9"},
		{"one age", &Data{Age: []float64{2, 2, 2}, Value: []float64{1, 2, 3}}, nil, []error{ErrData}, "ages are equal"},
		{"one age in a stratum", func() *Data {
			d := good()
			d.Stratum = slices.Repeat([]string{"a"}, 50)
			d.Stratum[10] = "b"
			return d
		}(), nil, []error{ErrData}, `"b"`},
	}
	for _, c := range cases {
		_, err := Fit(c.d, c.s)
		if err == nil {
			t.Errorf("%s: no error", c.name)
			continue
		}
		for _, w := range c.want {
			if !errors.Is(err, w) {
				t.Errorf("%s: error %v does not wrap %v", c.name, err, w)
			}
		}
		if !strings.Contains(err.Error(), c.text) {
			t.Errorf("%s: error %q does not mention %q", c.name, err, c.text)
		}
	}
}

func TestFitBadSettings(t *testing.T) {
	d := lineData(200, 2)
	for i, s := range []*Settings{
		{Centiles: []float64{}},
		{Centiles: []float64{0, 50}},
		{Centiles: []float64{50, 100}},
		{Centiles: []float64{50, 10, 50}},
		{Centiles: []float64{math.NaN()}},
		{Degree: -1},
		{Degree: maxDegree + 1},
		{AgeScale: AgeScale{Kind: "sqrt"}},
		{Knots: -2},
		{Knots: 3, KnotAges: []float64{5}},
		{KnotAges: []float64{5, 4}},
		{KnotAges: []float64{-1}, AgeScale: AgeScale{Kind: ScaleLog}},
		{KnotAges: []float64{12}}, // outside the data's ages 0..10
		{Lambda: -1},
		{Lambda: math.Inf(1)},
		{Lambda: 2, Penalty: PenaltyNone},
		{Lambda: 2, Penalty: PenaltyAuto},
		{Penalty: "ridge"},
		{PenaltyOrder: -1},
		{PenaltyOrder: 5}, // above degree+1 = 4
		{Criterion: "aic"},
		{Criterion: CriterionCV, Folds: 1},
		{NonCross: "sort"},
		{GuardMin: -1},
		{GuardMin: math.NaN()},
		{GuardWindows: -3},
		{Bootstrap: -1},
		{Bootstrap: MinReplicates - 1},
		{BandPoints: 1},
		{Workers: -1},
	} {
		_, err := Fit(d, s)
		if !errors.Is(err, ErrSettings) && !errors.Is(err, ErrAgeScale) {
			t.Errorf("case %d %+v: error %v, want ErrSettings or ErrAgeScale", i, *s, err)
		}
	}
}

func TestInputHashCanonical(t *testing.T) {
	// One row (age 1, value 2, no weight, stratum or subject): by the
	// documented form the hashed bytes are the IEEE-754 bits of 1, 2 and 1
	// (0x3FF0000000000000, 0x4000000000000000; exact identity) and two zero
	// lengths.
	msg, _ := hex.DecodeString("3ff0000000000000" + "4000000000000000" + "3ff0000000000000" + "00000000" + "00000000")
	sum := sha256.Sum256(msg)
	want := hex.EncodeToString(sum[:])
	if got := inputHash(&Data{Age: []float64{1}, Value: []float64{2}}); got != want {
		t.Errorf("hash of one row = %s, want %s", got, want)
	}
	// Labels enter with their lengths, so ("ab", "") and ("a", "b") differ.
	msg2, _ := hex.DecodeString("3ff0000000000000" + "4000000000000000" + "3ff0000000000000" + "00000002" + "6162" + "00000000")
	sum2 := sha256.Sum256(msg2)
	d2 := &Data{Age: []float64{1}, Value: []float64{2}, Stratum: []string{"ab"}}
	if got := inputHash(d2); got != hex.EncodeToString(sum2[:]) {
		t.Errorf("hash with stratum = %s, want %s", got, hex.EncodeToString(sum2[:]))
	}
	d3 := &Data{Age: []float64{1}, Value: []float64{2}, Stratum: []string{"a"}, Subject: []string{"b"}}
	if inputHash(d2) == inputHash(d3) {
		t.Error("labels (ab, -) and (a, b) hash alike")
	}
	// Nil weights hash as all ones.
	d4 := &Data{Age: []float64{1}, Value: []float64{2}, Weight: []float64{1}}
	if inputHash(d4) != want {
		t.Error("weight 1 and nil weights hash differently")
	}
}

func TestFitReference(t *testing.T) {
	a, b := lineData(400, 3), lineData(300, 4)
	d := &Data{
		Age:     append(a.Age, b.Age...),
		Value:   append(a.Value, b.Value...),
		Stratum: append(slices.Repeat([]string{"girls"}, 400), slices.Repeat([]string{"boys"}, 300)...),
	}
	s := &Settings{Measure: "length", Unit: "cm", AgeUnit: "years", Knots: 3}
	ref := mustFit(t, d, s)
	if ref.Format != "growband-reference" || ref.Version != FormatVersion || ref.Caution != Caution {
		t.Errorf("header %q %d %q", ref.Format, ref.Version, ref.Caution)
	}
	if ref.Measure != "length" || ref.Unit != "cm" || ref.AgeUnit != "years" {
		t.Errorf("metadata %q %q %q", ref.Measure, ref.Unit, ref.AgeUnit)
	}
	if ref.Degree != 3 || ref.AgeScale.Kind != ScaleIdentity || ref.Created.IsZero() {
		t.Errorf("degree %d, scale %+v, created %v", ref.Degree, ref.AgeScale, ref.Created)
	}
	if ref.InputHash != inputHash(d) || len(ref.InputHash) != 64 {
		t.Errorf("input hash %q", ref.InputHash)
	}
	if len(ref.Strata) != 2 || ref.Strata[0].Name != "boys" || ref.Strata[1].Name != "girls" {
		t.Fatalf("strata not sorted by name: %d", len(ref.Strata))
	}
	for _, st := range ref.Strata {
		if want := map[string]int{"boys": 300, "girls": 400}[st.Name]; st.N != want {
			t.Errorf("%s: N = %d, want %d", st.Name, st.N, want)
		}
		if !slices.Equal(st.Chart, []float64{0.03, 0.10, 0.25, 0.5, 0.75, 0.90, 0.97}) {
			t.Errorf("%s: chart %v", st.Name, st.Chart)
		}
		for _, tau := range st.Chart {
			if !slices.Contains(st.Taus, tau) {
				t.Errorf("%s: chart tau %v not in the grid", st.Name, tau)
			}
		}
		for k := 1; k <= 99; k++ {
			if !slices.Contains(st.Taus, float64(k)/100) {
				t.Errorf("%s: grid lacks %v", st.Name, float64(k)/100)
			}
		}
		if !slices.IsSorted(st.Taus) || len(st.Coef) != len(st.Taus) {
			t.Errorf("%s: %d taus (sorted %v), %d coefficient vectors", st.Name, len(st.Taus), slices.IsSorted(st.Taus), len(st.Coef))
		}
		p := len(st.Knots) - ref.Degree - 1
		for _, c := range st.Coef {
			if len(c) != p {
				t.Fatalf("%s: %d coefficients for %d basis functions", st.Name, len(c), p)
			}
		}
		if st.Smoothness.InteriorKnots != 3 || st.Smoothness.Criterion != CriterionFixed || st.Smoothness.Lambda != 0 {
			t.Errorf("%s: smoothness %+v", st.Name, st.Smoothness)
		}
		if st.AgeMin < 0 || st.AgeMax > 10 || st.AgeMax-st.AgeMin < 9 {
			t.Errorf("%s: age range [%v, %v]", st.Name, st.AgeMin, st.AgeMax)
		}
	}
	// The scoring side's own consistency check (Validate) accepts the fit.
	if err := ref.Validate(); err != nil {
		t.Errorf("Validate: %v", err)
	}
}

// TestEquivariance checks exact identities of the fit: the check loss is
// positively homogeneous and translation equivariant, the penalty is
// homogeneous and blind to constants (differences of order >= 1), and
// B-splines sum to one, so values a*y + c give every curve a*Q + c and the
// same smoothness choice.
func TestEquivariance(t *testing.T) {
	d := lineData(600, 5)
	base := mustFit(t, d, nil)
	for _, tr := range []struct{ a, c float64 }{{3.7, 0}, {0.01, 0}, {1, 250}, {2.5, -40}} {
		d2 := &Data{Age: d.Age, Value: make([]float64, len(d.Value))}
		for i, v := range d.Value {
			d2.Value[i] = tr.a*v + tr.c
		}
		ref := mustFit(t, d2, nil)
		st0, st := base.Strata[0], ref.Strata[0]
		if st.Smoothness.InteriorKnots != st0.Smoothness.InteriorKnots || !slices.Equal(st.Taus, st0.Taus) {
			t.Errorf("a=%v c=%v: smoothness %+v vs %+v", tr.a, tr.c, st.Smoothness, st0.Smoothness)
			continue
		}
		scale := 0.0
		for _, c := range st0.Coef {
			for _, v := range c {
				scale = max(scale, math.Abs(tr.a*v+tr.c))
			}
		}
		worst := 0.0
		for k := range st.Coef {
			for j, v := range st.Coef[k] {
				worst = max(worst, math.Abs(v-(tr.a*st0.Coef[k][j]+tr.c)))
			}
		}
		// Solver rounding only: 1e-9 relative to the largest coefficient.
		if worst > 1e-9*scale {
			t.Errorf("a=%v c=%v: coefficients differ from a*b+c by %g (scale %g)", tr.a, tr.c, worst, scale)
		}
	}
}

func TestFitWeightsAndWorkers(t *testing.T) {
	// Integer weights are frequency weights: a row of weight 2 enters the
	// check loss like two copies of the row (exact identity), so the
	// median fits of both forms reach the same optimal objective. (Tied
	// copies make the optimum non-unique, so the vertices may differ.)
	d := lineData(300, 6)
	w := make([]float64, 300)
	dup := &Data{}
	for i := range w {
		w[i] = float64(1 + i%2)
		for range int(w[i]) {
			dup.Age = append(dup.Age, d.Age[i])
			dup.Value = append(dup.Value, d.Value[i])
		}
	}
	d.Weight = w
	// Explicit knots: quantile knots would see the copies.
	s := &Settings{KnotAges: []float64{2, 4, 6, 8}}
	a, b := mustFit(t, d, s).Strata[0], mustFit(t, dup, s).Strata[0]
	loss := func(st Stratum) float64 {
		bs, err := spline.New(st.Knots, 3)
		if err != nil {
			t.Fatal(err)
		}
		k := slices.Index(st.Taus, 0.5)
		sum := 0.0
		for i := range d.Age {
			q, err := bs.Value(st.Coef[k], d.Age[i])
			if err != nil {
				t.Fatal(err)
			}
			sum += w[i] * checkLoss(d.Value[i]-q, 0.5)
		}
		return sum
	}
	if la, lb := loss(a), loss(b); math.Abs(la-lb) > 1e-9*la { // solver rounding
		t.Errorf("weighted median objective %v, duplicated %v", la, lb)
	}

	// Results do not depend on the number of workers.
	c1 := mustFit(t, d, &Settings{Workers: 1}).Strata[0]
	c3 := mustFit(t, d, &Settings{Workers: 3}).Strata[0]
	for k := range c1.Coef {
		if !slices.Equal(c1.Coef[k], c3.Coef[k]) {
			t.Fatalf("tau %v: 1 worker %v, 3 workers %v", c1.Taus[k], c1.Coef[k], c3.Coef[k])
		}
	}
	if !reflect.DeepEqual(c1.Smoothness, c3.Smoothness) {
		t.Errorf("smoothness %+v vs %+v", c1.Smoothness, c3.Smoothness)
	}
}

func TestFitProgress(t *testing.T) {
	var sb strings.Builder
	mustFit(t, lineData(200, 7), &Settings{Progress: &sb, Knots: 2, Bootstrap: MinReplicates})
	out := sb.String()
	if out == "" {
		t.Fatal("no progress lines")
	}
	for _, line := range strings.Split(strings.TrimSuffix(out, "\n"), "\n") {
		if !strings.HasPrefix(line, "growband: ") {
			t.Errorf("progress line %q lacks the prefix", line)
		}
	}
	if !strings.Contains(out, "bootstrap") {
		t.Errorf("no bootstrap progress in %q", out)
	}
}

func TestFitAgeScale(t *testing.T) {
	d := lineData(500, 8)
	for i := range d.Age {
		d.Age[i] += 0.05 // keep log(age) finite
	}
	s := &Settings{AgeScale: AgeScale{Kind: ScaleLog}, KnotAges: []float64{1, 3, 6}}
	ref := mustFit(t, d, s)
	st := ref.Strata[0]
	k := ref.Degree + 1
	for i, a := range []float64{1, 3, 6} {
		if got, want := st.Knots[k+i], math.Log(a); got != want {
			t.Errorf("interior knot %d = %v, want log(%v) = %v", i, got, a, want)
		}
	}
	lo, hi := math.Log(st.AgeMin), math.Log(st.AgeMax)
	if st.Knots[0] != lo || st.Knots[len(st.Knots)-1] != hi {
		t.Errorf("boundary knots %v, %v; want T of the age range %v, %v", st.Knots[0], st.Knots[len(st.Knots)-1], lo, hi)
	}
	if st.Smoothness.InteriorKnots != 3 || st.Smoothness.Criterion != CriterionFixed {
		t.Errorf("smoothness %+v", st.Smoothness)
	}
}

// testModel prepares the first group of d under c and its design at the
// first candidate knot set.
func testModel(t *testing.T, d *Data, c *config) (*rows, *model) {
	t.Helper()
	groups, _, err := prepare(d, c)
	if err != nil {
		t.Fatal(err)
	}
	sets, err := knotSets(groups[0], c)
	if err != nil {
		t.Fatal(err)
	}
	m, err := newModel(groups[0], sets[0], c.degree, c.order)
	if err != nil {
		t.Fatal(err)
	}
	return groups[0], m
}

// TestFitReady: a fitted reference comes back validated with each stratum's
// basis cached, as Load returns one, so that scoring it does not validate
// the whole stratum again at every look-up.
func TestFitReady(t *testing.T) {
	ref, err := Fit(lmsTruth{}.draw(2000, 5), &Settings{Knots: 2, Penalty: PenaltyNone})
	if err != nil {
		t.Fatal(err)
	}
	for _, st := range ref.Strata {
		if st.basis == nil {
			t.Errorf("stratum %q: no cached basis", st.Name)
		}
	}
}
