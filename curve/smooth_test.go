package curve

import (
	"math"
	"math/rand/v2"
	"testing"
)

func TestCheckLoss(t *testing.T) {
	// rho_tau(u) = u*(tau - 1{u<0}) (Koenker & Bassett 1978): exact values.
	for _, c := range []struct{ u, tau, want float64 }{
		{2, 0.25, 0.5}, {-2, 0.25, 1.5}, {0, 0.9, 0}, {-1, 0.5, 0.5}, {1, 0.5, 0.5}, {-4, 0.9, 0.4},
	} {
		if got := checkLoss(c.u, c.tau); math.Abs(got-c.want) > 1e-15 {
			t.Errorf("rho_%v(%v) = %v, want %v", c.tau, c.u, got, c.want)
		}
	}
}

// shapeData draws n rows of y = f(a) + 0.3 e, a ~ U[0,1], e ~ N(0,1).
func shapeData(n int, seed uint64, f func(float64) float64) *Data {
	rng := rand.New(rand.NewPCG(seed, 2))
	d := &Data{Age: make([]float64, n), Value: make([]float64, n)}
	for i := range n {
		a := rng.Float64()
		d.Age[i], d.Value[i] = a, f(a)+0.3*rng.NormFloat64()
	}
	return d
}

// wiggly has five half-waves on [0,1]; straight has none.
func wiggly(a float64) float64   { return math.Sin(2 * math.Pi * 2.5 * a) }
func straight(a float64) float64 { return a }

func TestSmoothnessKnotChoice(t *testing.T) {
	for _, crit := range []string{CriterionSIC, CriterionCV} {
		s := &Settings{Penalty: PenaltyNone, Criterion: crit}
		w := mustFit(t, shapeData(1000, 21, wiggly), s).Strata[0].Smoothness
		l := mustFit(t, shapeData(1000, 22, straight), s).Strata[0].Smoothness
		t.Logf("%s: wiggly %+v, straight %+v", crit, w, l)
		if w.Criterion != crit || l.Criterion != crit {
			t.Errorf("%s: criterion recorded as %q, %q", crit, w.Criterion, l.Criterion)
		}
		// A cubic spline needs about one knot per half-wave to follow a sine;
		// a straight line needs none. Bounds are loose: the ordering is the
		// point.
		if w.InteriorKnots < 4 || l.InteriorKnots > 2 || w.InteriorKnots <= l.InteriorKnots {
			t.Errorf("%s: wiggly truth got %d knots, straight truth %d", crit, w.InteriorKnots, l.InteriorKnots)
		}
	}
}

func TestSmoothnessLambdaChoice(t *testing.T) {
	s := &Settings{Knots: 15, Penalty: PenaltyAuto}
	w := mustFit(t, shapeData(1000, 23, wiggly), s).Strata[0].Smoothness
	l := mustFit(t, shapeData(1000, 24, straight), s).Strata[0].Smoothness
	t.Logf("wiggly %+v, straight %+v", w, l)
	if w.InteriorKnots != 15 || w.Order != DefaultPenaltyOrder {
		t.Errorf("fixed knots or order not kept: %+v", w)
	}
	if !(w.Lambda < l.Lambda) {
		t.Errorf("wiggly truth got lambda %v, straight truth %v: want smaller for wiggly", w.Lambda, l.Lambda)
	}
	// A straight truth is in the null space of the second-difference
	// penalty: the criterion should reach for a heavy penalty.
	if l.Lambda == 0 {
		t.Error("straight truth left unpenalised")
	}
}

func TestSmoothnessFixed(t *testing.T) {
	d := shapeData(400, 25, wiggly)
	st := mustFit(t, d, &Settings{Knots: 5}).Strata[0]
	if sm := st.Smoothness; sm.InteriorKnots != 5 || sm.Lambda != 0 || sm.Criterion != CriterionFixed || math.IsNaN(sm.Score) {
		t.Errorf("Knots 5: %+v", sm)
	}
	st = mustFit(t, d, &Settings{Knots: NoKnots}).Strata[0]
	if sm := st.Smoothness; sm.InteriorKnots != 0 || len(st.Knots) != 8 { // 2*(degree+1) knots, exact
		t.Errorf("NoKnots: %+v with %d knots", sm, len(st.Knots))
	}
	st = mustFit(t, d, &Settings{Knots: 6, Lambda: 3}).Strata[0]
	if sm := st.Smoothness; sm.InteriorKnots != 6 || sm.Lambda != 3 || sm.Criterion != CriterionFixed {
		t.Errorf("Knots 6, Lambda 3: %+v", sm)
	}
	// A fixed lambda with automatic knots chooses only the knots.
	st = mustFit(t, d, &Settings{Lambda: 1}).Strata[0]
	if sm := st.Smoothness; sm.Lambda != 1 || sm.Criterion != CriterionSIC {
		t.Errorf("Lambda 1: %+v", sm)
	}
}

func TestFoldsBySubject(t *testing.T) {
	// 37 subjects with 1..5 rows each, rows interleaved.
	r := &rows{}
	for i := range 120 {
		r.y = append(r.y, 0)
		r.subj = append(r.subj, (i*7)%37)
	}
	r.nsubj = 37
	fold, err := folds(r, 5, 9)
	if err != nil {
		t.Fatal(err)
	}
	of := map[int]int{}
	perFold := make([]map[int]bool, 5)
	for i := range perFold {
		perFold[i] = map[int]bool{}
	}
	for i, f := range fold {
		if g, ok := of[r.subj[i]]; ok && g != f {
			t.Fatalf("subject %d in folds %d and %d", r.subj[i], g, f)
		}
		of[r.subj[i]] = f
		perFold[f][r.subj[i]] = true
	}
	for f, m := range perFold {
		// 37 subjects dealt round-robin into 5 folds: 7 or 8 each (exact).
		if len(m) < 7 || len(m) > 8 {
			t.Errorf("fold %d has %d subjects", f, len(m))
		}
	}
	if _, err := folds(&rows{y: make([]float64, 3)}, 5, 1); err == nil {
		t.Error("5 folds of 3 rows accepted")
	}
}

func TestSICEdf(t *testing.T) {
	// Unpenalised, the vertex interpolates as many rows as there are
	// coefficients (Koenker, Ng & Portnoy 1994: the dimension of the fit).
	c, err := (&Settings{Knots: 4}).resolve()
	if err != nil {
		t.Fatal(err)
	}
	r, m := testModel(t, shapeData(300, 26, wiggly), c)
	sols, err := fitEach(newPool(1), m.x, r.y, r.w, nil, 0, []float64{0.5})
	if err != nil {
		t.Fatal(err)
	}
	if got := interpolated(sols[0], m.x, r.y); got != m.p {
		t.Errorf("median interpolates %d rows, want p = %d", got, m.p)
	}
	// With a penalty the dimension drops.
	total, _ := r.weight()
	sols, err = fitEach(newPool(1), m.x, r.y, r.w, m.pen, 0.1*total/float64(m.p), []float64{0.5})
	if err != nil {
		t.Fatal(err)
	}
	if got := interpolated(sols[0], m.x, r.y); got >= m.p {
		t.Errorf("penalised median interpolates %d rows, want fewer than p = %d", got, m.p)
	}
}
