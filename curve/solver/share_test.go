package solver

import (
	"slices"
	"testing"
)

// TestSharedPenalty checks that a design keeping the penalty rows just past
// its data rows (as package curve builds it) gives the tables newTable would
// copy, hence the same solutions to the last bit (exact identity), and that
// rows that differ from the penalty in any entry are not used. Data: the
// invented growth rows of testGrowthProblem, large enough for the
// sign-fixing reduction.
func TestSharedPenalty(t *testing.T) {
	p := testGrowthProblem(PreprocessRows + 5000)
	p.Lambda, p.Penalty = 50, testDiffPenalty(p.X.Cols)
	n, w, q := p.X.Rows(), p.X.Width, p.X.Cols
	nPen := p.Penalty.Rows()
	// The same rows with the penalty rows, padded to w, in spare capacity.
	first := append(slices.Grow(slices.Clone(p.X.First), nPen), make([]int, nPen)...)
	val := append(slices.Grow(slices.Clone(p.X.Val), nPen*w), make([]float64, nPen*w)...)
	for k := range nPen {
		f, v := p.Penalty.Row(k)
		at := min(f, q-w)
		first[n+k] = at
		copy(val[(n+k)*w+f-at:], v)
	}
	shared := *p
	shared.X = &Design{Cols: q, Width: w, First: first[:n], Val: val[:n*w]}
	if &newTable(&shared).x.Val[0] != &val[0] {
		t.Fatal("the table copied a design that holds its penalty rows")
	}
	if &newTable(p).x.Val[0] == &p.X.Val[0] {
		t.Fatal("the table shares a design without penalty rows")
	}
	taus := []float64{0.03, 0.5, 0.97}
	want, err := SolveGrid(p, taus, &Settings{Ordered: true})
	if err != nil {
		t.Fatal(err)
	}
	got, err := SolveGrid(&shared, taus, &Settings{Ordered: true})
	if err != nil {
		t.Fatal(err)
	}
	for k := range taus {
		if !slices.Equal(got[k].Coef, want[k].Coef) || got[k].Objective != want[k].Objective {
			t.Errorf("tau %v: shared rows give %v (objective %v), copied %v (%v)", taus[k], got[k].Coef, got[k].Objective, want[k].Coef, want[k].Objective)
		}
	}
	// One entry off: the rows are not the penalty and must not be used.
	val[(n+1)*w+1] += 1e-12
	if sharedPenalty(shared.X, p.Penalty, w) != nil {
		t.Error("rows that differ from the penalty were shared")
	}
}
