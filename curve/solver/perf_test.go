package solver

import (
	"math"
	"testing"
)

// TestGridPreprocessed runs SolveGrid on growth-like data large enough for
// the sign-fixing reduction, so that every tau after the first is reduced
// around its neighbour's residuals (solve.go, preprocess.go), including the
// extreme taus where the band of kept rows is clipped at a rank of 0 or 1.
// Each answer must carry the optimality certificate and match the objective
// of the unreduced interior-point solve of the same LP (exact identity: the
// reduction must not change the optimum).
func TestGridPreprocessed(t *testing.T) {
	n := 30000
	if testing.Short() {
		n = PreprocessRows + 5000
	}
	p := testGrowthProblem(n)
	taus := []float64{0.01, 0.02, 0.03, 0.5, 0.51, 0.97, 0.98, 0.99}
	sols, err := testSolveGrid(p, taus, nil)
	if err != nil {
		t.Fatal(err)
	}
	for k, tau := range taus {
		q := *p
		q.Tau = tau
		checkCertificate(t, &q, sols[k], dataCertTol)
		// The certificate is kept compactly: continuous responses tie with
		// the fit at the p basis rows only (with probability one), so Zero
		// is as long as the basis, not the data (exact identity).
		if len(sols[k].Zero) > len(sols[k].Coef)+len(sols[k].ConstraintDual) {
			t.Errorf("tau %v: %d zero rows listed for %d coefficients", tau, len(sols[k].Zero), len(sols[k].Coef))
		}
		if k%3 != 0 {
			continue // the certificate suffices; spot-check a few objectives
		}
		full, err := testSolve(&q, &Settings{Method: Interior, NoPreprocess: true})
		if err != nil {
			t.Fatal(err)
		}
		if !testRelClose(sols[k].Objective, full.Objective, identObjTol) {
			t.Errorf("tau %v: grid objective %.15g, unreduced %.15g", tau, sols[k].Objective, full.Objective)
		}
	}
}

// TestGridOrdered runs SolveGrid with Settings.Ordered on growth-like data
// at close extreme taus,
// small (simplex path) and large enough for the sign-fixing reduction, with
// and without a penalty. Each answer after the median must carry the
// certificate of the problem with the ordering rows against its neighbour
// on the walk, and match the objective of Solve on that same constrained
// problem without reduction (exact identity); consecutive coefficients must
// be ordered to within the certificate's tolerance.
func TestGridOrdered(t *testing.T) {
	taus := []float64{0.01, 0.012, 0.014, 0.5, 0.986, 0.988, 0.99}
	sizes := []int{2000, PreprocessRows + 5000}
	binding := 0
	for _, n := range sizes {
		for _, lambda := range []float64{0, 50} {
			p := testGrowthProblem(n)
			if lambda > 0 {
				p.Lambda, p.Penalty = lambda, testDiffPenalty(p.X.Cols)
			}
			sols, err := testSolveGrid(p, taus, &Settings{Ordered: true})
			if err != nil {
				t.Fatalf("n %d, lambda %v: %v", n, lambda, err)
			}
			mid := 3
			for k := range taus {
				if k == mid {
					q := *p
					q.Tau = taus[k]
					checkCertificate(t, &q, sols[k], dataCertTol)
					continue
				}
				dir, nb := 1.0, k-1
				if k < mid {
					dir, nb = -1, k+1
				}
				prev := sols[nb]
				q := *p
				q.Tau = taus[k]
				for j := range p.X.Cols {
					g := make([]float64, p.X.Cols)
					g[j] = dir
					q.G = append(q.G, g)
					q.H = append(q.H, dir*prev.Coef[j])
					if gap := dir * (sols[k].Coef[j] - prev.Coef[j]); gap < -dataCertTol*(1+math.Abs(prev.Coef[j])) {
						t.Errorf("n %d, lambda %v, tau %v: coefficient %d out of order by %g", n, lambda, taus[k], j, -gap)
					}
				}
				checkCertificate(t, &q, sols[k], dataCertTol)
				for _, mu := range sols[k].ConstraintDual {
					if mu > 0 {
						binding++
					}
				}
				if testing.Short() && n > PreprocessRows {
					continue // the certificate suffices; the unreduced solve is slow
				}
				want, err := testSolve(&q, &Settings{NoPreprocess: true})
				if err != nil {
					t.Fatal(err)
				}
				if !testRelClose(sols[k].Objective, want.Objective, identObjTol) {
					t.Errorf("n %d, lambda %v, tau %v: grid objective %.15g, unreduced %.15g", n, lambda, taus[k], sols[k].Objective, want.Objective)
				}
			}
		}
	}
	// Neighbouring extreme taus cross unconstrained, so the constraints
	// must bind somewhere, or the test would not test them.
	if binding == 0 {
		t.Error("no ordering constraint binds")
	}
	t.Logf("%d ordering constraints bind", binding)
}

// testDiffPenalty returns the second-difference rows (1, -2, 1) of q
// coefficients, the default penalty of package curve.
func testDiffPenalty(q int) *Design {
	d := &Design{Cols: q, Width: 3, First: make([]int, q-2)}
	for j := range q - 2 {
		d.First[j] = j
		d.Val = append(d.Val, 1, -2, 1)
	}
	return d
}
