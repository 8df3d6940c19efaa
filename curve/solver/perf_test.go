package solver

import "testing"

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
