package curve

import (
	"math"
	"testing"

	"growband/spline"
)

// TestSelectOnSample lowers the size above which smoothness is chosen on a
// sample, and checks that the final fit is the fit on every row with the
// chosen smoothness: the same reference as a fit told those knots and that
// lambda outright (exact identity, up to the rounding of a vertex solve),
// with the knots at the quantiles of all the ages and lambda rescaled from
// the sample's weight to the stratum's. Data: the LMS simulation of
// recovery_test.go.
func TestSelectOnSample(t *testing.T) {
	const n, m = 30000, 5000
	d := lmsTruth{}.draw(n, 11)
	penalties := []string{PenaltyNone, PenaltyAuto}
	if testing.Short() {
		penalties = penalties[:1]
	}
	for _, penalty := range penalties {
		s := &Settings{Penalty: penalty, Seed: 3}
		c, err := s.resolve()
		if err != nil {
			t.Fatal(err)
		}
		c.selectRows = m
		groups, _, err := prepare(d, c)
		if err != nil {
			t.Fatal(err)
		}
		strata, err := fitStrata(groups, c)
		if err != nil {
			t.Fatal(err)
		}
		st := strata[0]
		if st.N != n {
			t.Fatalf("%s: fitted %d rows, want %d", penalty, st.N, n)
		}
		deg := DefaultDegree
		interior := st.Knots[deg+1 : len(st.Knots)-deg-1]
		want, err := spline.QuantileKnots(groups[0].t, len(interior))
		if err != nil {
			t.Fatal(err)
		}
		for k := range want {
			if interior[k] != want[k] {
				t.Errorf("%s: knot %d at %v, want the quantile of all ages %v", penalty, k, interior[k], want[k])
			}
		}
		// The choice on the sample itself, for lambda.
		ch, err := chooseSmoothness(newPool(1), groups[0].sample(m, c.seed), c)
		if err != nil {
			t.Fatal(err)
		}
		if got, w := st.Smoothness.Lambda, ch.smooth.Lambda*n/m; math.Abs(got-w) > 1e-12*w {
			t.Errorf("%s: lambda %v, want the sample's %v times %d/%d", penalty, got, ch.smooth.Lambda, n, m)
		}
		if penalty == PenaltyAuto && st.Smoothness.Lambda == 0 {
			t.Logf("%s: the criterion chose no penalty", penalty)
		}

		ref, err := Fit(d, &Settings{KnotAges: interior, Penalty: PenaltyFixed, Lambda: st.Smoothness.Lambda, Seed: 3})
		if err != nil {
			t.Fatal(err)
		}
		direct := ref.Strata[0]
		// A vertex is a p x p solve; started from another basis its
		// rounding differs (relative 1e-9: the solver tests' identObjTol).
		const tol = 1e-9
		for k := range st.Coef {
			for j := range st.Coef[k] {
				a, b := st.Coef[k][j], direct.Coef[k][j]
				if math.Abs(a-b) > tol*(1+math.Abs(b)) {
					t.Fatalf("%s: tau %v coefficient %d: %v after the sampled choice, %v told directly", penalty, st.Taus[k], j, a, b)
				}
			}
		}
	}
}
