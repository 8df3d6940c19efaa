package curve

import (
	"math"
	"slices"
	"testing"
)

// crossingData is small and noisy with many knots, so unconstrained fits of
// neighbouring taus cross (checked below, so the test is not vacuous).
func crossingData() *Data { return lineData(400, 11) }

var crossingSettings = Settings{Knots: 10, Penalty: PenaltyNone}

// TestNonCrossDense checks the guarantee on 1000 ages for the whole tau
// grid in both modes: coefficients ordered componentwise, hence curve values
// ordered exactly (B-splines are non-negative and sum to one; floating point
// products and sums round monotonically), with zero tolerance.
func TestNonCrossDense(t *testing.T) {
	for _, mode := range []string{NonCrossConstrain, NonCrossRearrange} {
		s := crossingSettings
		s.NonCross = mode
		ref := mustFit(t, crossingData(), &s)
		st := &ref.Strata[0]
		for k := 1; k < len(st.Coef); k++ {
			for j := range st.Coef[k] {
				if st.Coef[k][j] < st.Coef[k-1][j] {
					t.Fatalf("%s: coef %d of tau %v below that of tau %v", mode, j, st.Taus[k], st.Taus[k-1])
				}
			}
		}
		b := basisOf(t, ref, st)
		const ages = 1000 // dense grid, as the brief asks
		for i := range ages {
			age := st.AgeMin + (st.AgeMax-st.AgeMin)*float64(i)/(ages-1)
			q := curvesAt(t, ref, st, b, age)
			for k := 1; k < len(q); k++ {
				if q[k] < q[k-1] {
					t.Fatalf("%s: at age %v tau %v (%v) is below tau %v (%v)", mode, age, st.Taus[k], q[k], st.Taus[k-1], q[k-1])
				}
			}
		}
	}
}

// TestUnconstrainedCross makes sure the data of TestNonCrossDense do make
// free fits cross, and that rearrangement is exactly the componentwise sort
// of the free fits.
func TestUnconstrainedCross(t *testing.T) {
	c, err := crossingSettings.resolve()
	if err != nil {
		t.Fatal(err)
	}
	r, m := testModel(t, crossingData(), c)
	taus, _ := tauGrid(c.chart, guardWindows(r, c.windows, c.scale), c.guardMin)
	pl := newPool(2)
	mid := slices.Index(taus, 0.5)
	// fitEach visits taus by distance from its first entry: start at 0.5.
	order := append([]float64{0.5}, slices.Delete(slices.Clone(taus), mid, mid+1)...)
	sols, err := fitEach(pl, m.x, r.y, r.w, nil, 0, order)
	if err != nil {
		t.Fatal(err)
	}
	free := make([][]float64, len(taus))
	for i, tau := range order {
		free[slices.Index(taus, tau)] = sols[i].Coef
	}
	crossings := 0
	for k := 1; k < len(taus); k++ {
		for j := range free[k] {
			if free[k][j] < free[k-1][j] {
				crossings++
			}
		}
	}
	if crossings == 0 {
		t.Fatal("free fits never out of order: the non-crossing tests are vacuous")
	}
	t.Logf("%d out-of-order coefficient pairs in the free fits", crossings)

	re, err := fitGrid(pl, m, r.y, r.w, 0, taus, NonCrossRearrange, nil)
	if err != nil {
		t.Fatal(err)
	}
	col := make([]float64, len(taus))
	for j := range m.p {
		for k := range taus {
			col[k] = free[k][j]
		}
		slices.Sort(col)
		for k := range taus {
			// The same LP optima reached along another warm-start path: solver
			// rounding only (1e-9 relative).
			if math.Abs(re[k][j]-col[k]) > 1e-9*(1+math.Abs(col[k])) {
				t.Fatalf("rearranged coef %d at tau %v = %v, sorted free fits give %v", j, taus[k], re[k][j], col[k])
			}
		}
	}

	// The constrained chain binds somewhere on these data and leaves the
	// median alone.
	con, err := fitGrid(pl, m, r.y, r.w, 0, taus, NonCrossConstrain, nil)
	if err != nil {
		t.Fatal(err)
	}
	for j := range m.p {
		if math.Abs(con[mid][j]-free[mid][j]) > 1e-9*(1+math.Abs(free[mid][j])) {
			t.Fatalf("constrained median coef %d = %v, free %v", j, con[mid][j], free[mid][j])
		}
	}
	ties := 0
	for k := 1; k < len(taus); k++ {
		for j := range m.p {
			if con[k][j] == con[k-1][j] {
				ties++
			}
		}
	}
	if ties == 0 {
		t.Error("no constraint binds although the free fits cross")
	}
}
