package solver

import (
	"fmt"
	"math"
	"math/rand/v2"
	"slices"
	"testing"

	"gonum.org/v1/gonum/mat"
)

// Equivariance properties of regression quantiles, Koenker & Bassett (1978),
// Econometrica 46, 33-50, Theorem 3.2: exact identities of the LP, so the
// objectives must agree to rounding.
const (
	// identObjTol is the relative agreement of objectives (exact identity;
	// the tolerance is rounding only).
	identObjTol = 1e-9
	// identCoefTol is the agreement of unique coefficients relative to the
	// largest coefficient: a vertex is a p x p solve, so rounding grows with
	// its condition number (the generator keeps it below testMaxCond).
	identCoefTol = 1e-7
)

// testIdentityPair solves base and transformed problems and checks that
// obj(transformed) = objScale*obj(base) and, when the base optimum is unique,
// Coef(transformed) = coef(base coefficients).
func testIdentityPair(t *testing.T, name string, base, tr *Problem, m Method, objScale float64, coef func([]float64) []float64) {
	t.Helper()
	s0, err := testSolve(base, &Settings{Method: m})
	if err != nil {
		t.Errorf("%s: base: %v", name, err)
		return
	}
	s1, err := testSolve(tr, &Settings{Method: m})
	if err != nil {
		t.Errorf("%s: transformed: %v", name, err)
		return
	}
	checkCertificate(t, base, s0, dataCertTol)
	checkCertificate(t, tr, s1, dataCertTol)
	if !testRelClose(s1.Objective, objScale*s0.Objective, identObjTol) {
		t.Errorf("%s: objective %.15g, want %g * %.15g", name, s1.Objective, objScale, s0.Objective)
	}
	if !testUnique(base, s0) {
		return
	}
	want := coef(s0.Coef)
	scale := 1.0
	for _, v := range want {
		scale = math.Max(scale, math.Abs(v))
	}
	for k := range want {
		if math.Abs(s1.Coef[k]-want[k]) > identCoefTol*scale {
			t.Errorf("%s: b%d = %.12g, want %.12g", name, k, s1.Coef[k], want[k])
		}
	}
}

// testIdentities checks the four equivariances on p (its penalty and
// constraints are carried through where the identity allows them).
func testIdentities(t *testing.T, name string, p *Problem, m Method, rng *rand.Rand) {
	q := p.X.Cols

	// Scale: b(tau; c y) = c b(tau; y); constraints G b >= c h. The penalty
	// is homogeneous of degree one, so it may stay.
	c := math.Exp(rng.NormFloat64())
	sc := *p
	sc.Y = testScaled(c, p.Y)
	sc.H = testScaled(c, p.H)
	testIdentityPair(t, name+" scale", p, &sc, m, c, func(b []float64) []float64 { return testScaled(c, b) })

	// Negation: b(tau; -y) = -b(1-tau; y); constraints -G b >= h.
	neg := *p
	neg.Y = testScaled(-1, p.Y)
	neg.Tau = 1 - p.Tau
	neg.G = nil
	for _, g := range p.G {
		neg.G = append(neg.G, testScaled(-1, g))
	}
	testIdentityPair(t, name+" negation", p, &neg, m, 1, func(b []float64) []float64 { return testScaled(-1, b) })

	// The last two identities do not hold with a penalty on b.
	if p.Penalty != nil {
		return
	}

	// Regression shift: b(tau; y + X g) = b(tau; y) + g; constraints
	// G b >= h + G g.
	g := make([]float64, q)
	for k := range g {
		g[k] = rng.NormFloat64()
	}
	sh := *p
	sh.Y = make([]float64, len(p.Y))
	for i := range p.Y {
		sh.Y[i] = p.Y[i] + p.X.Dot(i, g)
	}
	sh.H = make([]float64, len(p.H))
	for j, gr := range p.G {
		sh.H[j] = p.H[j] + mat.Dot(mat.NewVecDense(q, gr), mat.NewVecDense(q, g))
	}
	if p.H == nil {
		sh.H = nil
	}
	testIdentityPair(t, name+" shift", p, &sh, m, 1, func(b []float64) []float64 {
		out := make([]float64, q)
		for k := range b {
			out[k] = b[k] + g[k]
		}
		return out
	})

	// Reparametrisation: b(tau; y, X A) = A^{-1} b(tau; y, X); constraints
	// G A. Dense designs only: X A fills a banded design.
	if p.X.Width != q {
		return
	}
	a := mat.NewDense(q, q, nil)
	for {
		for i := range q {
			for j := range q {
				v := 0.5 * rng.NormFloat64()
				if i == j {
					v += 1
				}
				a.Set(i, j, v)
			}
		}
		if mat.Cond(a, 2) < 100 { // keeps the rounding comparable (common practice)
			break
		}
	}
	var ainv mat.Dense
	if err := ainv.Inverse(a); err != nil {
		t.Fatal(err)
	}
	rp := *p
	rows := make([][]float64, p.X.Rows())
	for i := range rows {
		_, v := p.X.Row(i)
		var r mat.VecDense
		r.MulVec(a.T(), mat.NewVecDense(q, v))
		rows[i] = r.RawVector().Data
	}
	rp.X = NewDense(rows)
	rp.G = nil
	for _, gr := range p.G {
		var r mat.VecDense
		r.MulVec(a.T(), mat.NewVecDense(q, gr))
		rp.G = append(rp.G, r.RawVector().Data)
	}
	testIdentityPair(t, name+" reparametrisation", p, &rp, m, 1, func(b []float64) []float64 {
		var r mat.VecDense
		r.MulVec(&ainv, mat.NewVecDense(q, b))
		return r.RawVector().Data
	})
}

func testScaled(c float64, v []float64) []float64 {
	if v == nil {
		return nil
	}
	out := make([]float64, len(v))
	for i, x := range v {
		out[i] = c * x
	}
	return out
}

func TestIdentitiesRandom(t *testing.T) {
	count := 40
	if testing.Short() {
		count = 15
	}
	for seed := range count {
		rng := rand.New(rand.NewPCG(uint64(seed), 1978))
		tp := testRandomProblem(rng, 80, 6, seed%3 == 2)
		m := []Method{Simplex, Interior}[seed%2]
		testIdentities(t, fmt.Sprintf("seed %d %v (%s)", seed, m, tp.name), tp.p, m, rng)
	}
}

func TestIdentitiesEngel(t *testing.T) {
	y, x := testEngel(t)
	rng := rand.New(rand.NewPCG(1978, 33))
	for _, m := range []Method{Simplex, Interior} {
		for _, tau := range []float64{0.1, 0.5, 0.75} {
			p := &Problem{Y: y, X: x, Tau: tau}
			testIdentities(t, fmt.Sprintf("engel tau=%v %v", tau, m), p, m, rng)
		}
	}
}

// testGridTaus is 0.05, 0.10, ..., 0.95.
func testGridTaus() []float64 {
	var taus []float64
	for k := 1; k <= 19; k++ {
		taus = append(taus, float64(k)/20)
	}
	return taus
}

// testGrid checks SolveGrid over taus against per-tau Solve.
func testGrid(t *testing.T, name string, p *Problem, taus []float64) {
	t.Helper()
	sols, err := testSolveGrid(p, taus, nil)
	if err != nil {
		t.Errorf("%s: SolveGrid: %v", name, err)
		return
	}
	if len(sols) != len(taus) {
		t.Fatalf("%s: %d solutions for %d taus", name, len(sols), len(taus))
	}
	for k, tau := range taus {
		pt := *p
		pt.Tau = tau
		checkCertificate(t, &pt, sols[k], dataCertTol)
		one, err := testSolve(&pt, nil)
		if err != nil {
			t.Errorf("%s tau=%v: Solve: %v", name, tau, err)
			continue
		}
		// Same LP, so the same optimal objective (exact identity).
		if !testRelClose(sols[k].Objective, one.Objective, identObjTol) {
			t.Errorf("%s tau=%v: grid objective %.15g, Solve %.15g", name, tau, sols[k].Objective, one.Objective)
		}
	}
}

func TestSolveGridEngel(t *testing.T) {
	y, x := testEngel(t)
	p := &Problem{Y: y, X: x, Tau: 0.5}
	taus := testGridTaus()
	testGrid(t, "engel", p, taus)
	// "in any order": the same grid shuffled.
	rng := rand.New(rand.NewPCG(5, 95))
	rng.Shuffle(len(taus), func(i, j int) { taus[i], taus[j] = taus[j], taus[i] })
	testGrid(t, "engel shuffled", p, taus)
}

func TestSolveGridRandom(t *testing.T) {
	count := 12
	if testing.Short() {
		count = 4
	}
	for seed := range count {
		rng := rand.New(rand.NewPCG(uint64(seed), 9505))
		tp := testRandomProblem(rng, 120, 8, seed%2 == 1)
		testGrid(t, fmt.Sprintf("seed %d (%s)", seed, tp.name), tp.p, testGridTaus())
	}
}

// TestWarmStart checks that Settings.Start, a solution at a neighbouring tau
// or at other constraint bounds, gives the cold-start optimum.
func TestWarmStart(t *testing.T) {
	type pair struct {
		name      string
		from, to  *Problem
		methodSet []Method
	}
	var pairs []pair
	y, x := testEngel(t)
	for _, step := range []float64{0.01, 0.2} {
		pairs = append(pairs, pair{fmt.Sprintf("engel tau 0.5 -> %v", 0.5+step),
			&Problem{Y: y, X: x, Tau: 0.5}, &Problem{Y: y, X: x, Tau: 0.5 + step}, []Method{Simplex, Interior, Auto}})
	}
	for seed := range 20 {
		rng := rand.New(rand.NewPCG(uint64(seed), 4242))
		tp := testRandomProblem(rng, 100, 6, seed%2 == 0)
		to := *tp.p
		if len(to.H) > 0 && seed%2 == 0 {
			// Other bounds: tighten the first constraint, or loosen it when
			// gonum's simplex finds the tightened problem infeasible.
			to.H = append([]float64(nil), to.H...)
			to.H[0] += 0.1
			if _, _, err := gonumSolve(&to); err != nil {
				to.H[0] -= 0.2
			}
		} else {
			to.Tau = math.Min(0.97, to.Tau+0.03)
		}
		pairs = append(pairs, pair{fmt.Sprintf("seed %d (%s)", seed, tp.name), tp.p, &to, []Method{Simplex, Interior}})
	}
	for _, pr := range pairs {
		start, err := testSolve(pr.from, nil)
		if err != nil {
			t.Errorf("%s: start: %v", pr.name, err)
			continue
		}
		cold, err := testSolve(pr.to, nil)
		if err != nil {
			t.Errorf("%s: cold: %v", pr.name, err)
			continue
		}
		for _, m := range pr.methodSet {
			warm, err := testSolve(pr.to, &Settings{Method: m, Start: start})
			if err != nil {
				t.Errorf("%s %v: warm: %v", pr.name, m, err)
				continue
			}
			checkCertificate(t, pr.to, warm, dataCertTol)
			// Same LP, so the same optimal objective (exact identity).
			if !testRelClose(warm.Objective, cold.Objective, identObjTol) {
				t.Errorf("%s %v: warm objective %.15g, cold %.15g", pr.name, m, warm.Objective, cold.Objective)
			}
		}
	}
}

// TestWarmStartGrowth steps from tau 0.76 to 0.77 on 100,000 growth-like rows
// with a cubic B-spline design, where preprocessing uses the start (a step
// of BenchmarkGrid99x1e5 that once failed with ErrRankDeficient).
func TestWarmStartGrowth(t *testing.T) {
	if testing.Short() {
		t.Skip("100,000 rows")
	}
	p := testGrowthProblem(100000)
	p.Tau = 0.76
	start, err := testSolve(p, nil)
	if err != nil {
		t.Fatal(err)
	}
	to := *p
	to.Tau = 0.77
	cold, err := testSolve(&to, nil)
	if err != nil {
		t.Fatal(err)
	}
	warm, err := testSolve(&to, &Settings{Start: start})
	if err != nil {
		t.Fatalf("warm start from tau 0.76: %v", err)
	}
	checkCertificate(t, &to, warm, dataCertTol)
	// Same LP, so the same optimal objective (exact identity).
	if !testRelClose(warm.Objective, cold.Objective, identObjTol) {
		t.Errorf("warm objective %.15g, cold %.15g", warm.Objective, cold.Objective)
	}
}

// TestGuessStart starts 30,000 growth-like rows (above PreprocessRows, so
// the reduction runs) from coefficients alone, as a fit of another knot
// vector projected on this one does: a guess near the answer, one far from
// it (all zero: every row on one side, so a cold start is taken) and one of
// the wrong length (ignored). Every answer is certified and has the cold
// start's objective; the near guess, which spares the subsample's interior
// point, takes fewer iterations.
func TestGuessStart(t *testing.T) {
	p := testGrowthProblem(30000)
	for _, tau := range []float64{0.5, 0.9} {
		pr := *p
		pr.Tau = tau
		cold, err := testSolve(&pr, nil)
		if err != nil {
			t.Fatal(err)
		}
		near := slices.Clone(cold.Coef)
		for j := range near {
			near[j] *= 1 + 0.002*float64(j%3-1)
		}
		guesses := map[string][]float64{"near": near, "far": make([]float64, len(near)), "short": near[1:]}
		for name, g := range guesses {
			s, err := testSolve(&pr, &Settings{Start: &Solution{Coef: g}})
			if err != nil {
				t.Fatalf("tau %v, %s guess: %v", tau, name, err)
			}
			checkCertificate(t, &pr, s, dataCertTol)
			if !testRelClose(s.Objective, cold.Objective, identObjTol) {
				t.Errorf("tau %v, %s guess: objective %.15g, cold %.15g", tau, name, s.Objective, cold.Objective)
			}
			if name == "near" && s.Iterations >= cold.Iterations {
				t.Errorf("tau %v: near guess took %d iterations, cold %d", tau, s.Iterations, cold.Iterations)
			}
			t.Logf("tau %v, %s guess: %d iterations (cold %d), %d repairs", tau, name, s.Iterations, cold.Iterations, s.Reductions)
		}
	}
}
